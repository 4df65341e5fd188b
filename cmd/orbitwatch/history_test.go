package main

import (
	"encoding/csv"
	"encoding/xml"
	"fmt"
	"image/png"
	"io"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"testing"
	"time"

	"orbitwatch/bench/plot"
	"orbitwatch/delta"
	"orbitwatch/delta/catalog"
	"orbitwatch/shard"
)

// historyCSV runs history --csv and returns its header and rows.
func historyCSV(t *testing.T, args ...string) ([]string, [][]string) {
	t.Helper()
	r := mustRunCmd(t, append([]string{"history", "--csv"}, args...)...)
	recs, err := csv.NewReader(strings.NewReader(r.stdout)).ReadAll()
	if err != nil || len(recs) == 0 {
		t.Fatalf("history --csv %v: %v\n%s", args, err, r.stdout)
	}
	return recs[0], recs[1:]
}

// checkHistoryRows holds each row (seq, event_time, orbits…) against the
// replay checkpoint CSV of its seq and the log's watermark there; want
// lists the seqs the rows must have, in order.
func checkHistoryRows(t *testing.T, f *fixture, node string, orbits []int, rows [][]string, want []uint64) {
	t.Helper()
	if len(rows) != len(want) {
		t.Fatalf("node %q: %d rows, want checkpoints %v", node, len(rows), want)
	}
	for i, row := range rows {
		if row[0] != strconv.FormatUint(want[i], 10) {
			t.Fatalf("node %q row %d: seq %s, want %d", node, i, row[0], want[i])
		}
		wm := watermarkAt(t, f.lines, want[i])
		wantTime := ""
		if !wm.IsZero() {
			wantTime = wm.Format(time.RFC3339Nano)
		}
		if row[1] != wantTime {
			t.Errorf("node %q seq %d: event_time %q, want %q", node, want[i], row[1], wantTime)
		}
		vec := readRowsAt(t, f, want[i])[node]
		for j, o := range orbits {
			if row[j+2] != strconv.FormatUint(vec[o], 10) {
				t.Errorf("node %q seq %d orbit %d: %s, replay %d", node, want[i], o, row[j+2], vec[o])
			}
		}
	}
}

func allOrbits(n int) []int {
	ids := make([]int, n)
	for i := range ids {
		ids[i] = i
	}
	return ids
}

// listedSeqs returns the seqs of history rows and holds them to what
// history promises: checkpoints in want (the range), in order; the last of
// the range among them; and every one at which the node's degree (orbit 0)
// differs from the checkpoint before it, because its own record changed
// there.
func listedSeqs(t *testing.T, f *fixture, node string, rows [][]string, want []uint64) []uint64 {
	t.Helper()
	var got []uint64
	for _, r := range rows {
		s, err := strconv.ParseUint(r[0], 10, 64)
		if err != nil {
			t.Fatalf("row %q: %v", r, err)
		}
		got = append(got, s)
	}
	var exists []uint64
	for _, s := range want {
		if _, ok := readRowsAt(t, f, s)[node]; ok {
			exists = append(exists, s)
		}
	}
	if len(got) == 0 || len(exists) == 0 || got[len(got)-1] != exists[len(exists)-1] {
		t.Fatalf("node %q: rows at %v, want the range's last checkpoint %v among them", node, got, exists)
	}
	j := 0
	for i, s := range exists {
		for j < len(got) && got[j] < s {
			t.Fatalf("node %q: row at %d is not a checkpoint of the range %v", node, got[j], exists)
		}
		listed := j < len(got) && got[j] == s
		if listed {
			j++
		}
		if i > 0 && !listed {
			if readRowsAt(t, f, exists[i-1])[node][0] != readRowsAt(t, f, s)[node][0] {
				t.Fatalf("node %q: its degree changed at %d but history does not list it (rows %v)", node, s, got)
			}
		}
	}
	return got
}

func TestHistoryListsChangesInRange(t *testing.T) {
	f := newFixture(t, 21, true, 100)
	wm := func(n uint64) time.Time { return watermarkAt(t, f.lines, n) }
	node := "acct-000003"
	header, rows := historyCSV(t, "--data", f.data, "--node", node)
	wantHeader := "seq,event_time"
	for o := 0; o < 15; o++ {
		wantHeader += "," + strconv.Itoa(o)
	}
	if strings.Join(header, ",") != wantHeader {
		t.Errorf("header %q, want %q", strings.Join(header, ","), wantHeader)
	}
	all := listedSeqs(t, f, node, rows, f.seqs)
	checkHistoryRows(t, f, node, allOrbits(15), rows, all)

	// --from exactly at checkpoint 200, --to just before 400: within 200
	// and 300.
	_, rows = historyCSV(t, "--data", f.data, "--node", node,
		"--from", wm(200).Format(time.RFC3339), "--to", wm(400).Add(-time.Second).Format(time.RFC3339))
	checkHistoryRows(t, f, node, allOrbits(15), rows, listedSeqs(t, f, node, rows, []uint64{200, 300}))
	// --from alone, as Unix seconds just after 300's watermark.
	_, rows = historyCSV(t, "--data", f.data, "--node", node, "--from", strconv.FormatInt(wm(300).Unix()+1, 10))
	checkHistoryRows(t, f, node, allOrbits(15), rows, listedSeqs(t, f, node, rows, f.seqs[3:]))

	header, rows = historyCSV(t, "--data", f.data, "--node", node, "--orbits", "8,0,3")
	if strings.Join(header, ",") != "seq,event_time,8,0,3" {
		t.Errorf("--orbits 8,0,3: header %q", strings.Join(header, ","))
	}
	checkHistoryRows(t, f, node, []int{8, 0, 3}, rows, all)

	// A node that first appears after checkpoint 100 is listed from the
	// checkpoint where it exists.
	late := ""
	first := readRowsAt(t, f, 100)
	order, _ := readMatrix(t, f.replayCSV(f.seqs[len(f.seqs)-1]))
	for _, x := range order {
		if _, ok := first[x]; !ok {
			late = x
			break
		}
	}
	if late == "" {
		t.Fatal("fixture: every node exists at checkpoint 100")
	}
	_, rows = historyCSV(t, "--data", f.data, "--node", late)
	checkHistoryRows(t, f, late, allOrbits(15), rows, listedSeqs(t, f, late, rows, f.seqs))

	// The table has the same rows.
	r := mustRunCmd(t, "history", "--data", f.data, "--node", node, "--orbits", "0,3")
	lines := strings.Split(strings.TrimSuffix(r.stdout, "\n"), "\n")
	if len(lines) != 1+len(all) || !strings.Contains(lines[0], "seq") || !strings.Contains(lines[0], "event time") {
		t.Fatalf("table:\n%s", r.stdout)
	}
	vec := readRowsAt(t, f, all[1])[node]
	if got := strings.Fields(lines[2]); strings.Join(got, " ") != fmt.Sprintf("%d %s %d %d", all[1], wm(all[1]).Format(time.RFC3339Nano), vec[0], vec[3]) {
		t.Errorf("table row for seq %d: %q", all[1], lines[2])
	}

	for _, c := range []struct {
		args []string
		code int
		msg  string
	}{
		{[]string{"--node", "acct-424242"}, 1, `node "acct-424242" is not in`},
		{[]string{"--node", node, "--from", wm(f.seqs[len(f.seqs)-1]).Add(time.Hour).Format(time.RFC3339)}, 1, "no checkpoint has an event time in the range"},
		{[]string{"--node", node, "--from", "2026-03-02T00:00:00Z", "--to", "2026-03-01T00:00:00Z"}, 2, "is before --from"},
		{[]string{"--node", node, "--orbits", "0,15"}, 2, "not an orbit id"},
		{[]string{"--node", node, "--orbits", "3,3"}, 2, "given twice"},
		{[]string{"--node", node, "--from", "soon"}, 2, "--from"},
		{[]string{"--from", "2026-03-01T00:00:00Z"}, 2, "--node ID is required"},
	} {
		r := runCmd(t, append([]string{"history", "--data", f.data}, c.args...)...)
		if r.code != c.code || !strings.Contains(r.stderr, c.msg) || r.stdout != "" {
			t.Errorf("history %v: exit %d, stdout %q, stderr %q; want exit %d and %q", c.args, r.code, r.stdout, r.stderr, c.code, c.msg)
		}
	}
}

// svgText collects the text of every <text> element by class, and counts
// the <path> elements by class, from a well-formed SVG document.
func svgText(t *testing.T, path string) (texts map[string][]string, paths map[string]int) {
	t.Helper()
	fh, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer fh.Close()
	d := xml.NewDecoder(fh)
	texts, paths = map[string][]string{}, map[string]int{}
	var class string
	inText := false
	for {
		tok, err := d.Token()
		if err == io.EOF {
			break
		}
		if err != nil {
			t.Fatalf("%s is not well-formed XML: %v", path, err)
		}
		switch el := tok.(type) {
		case xml.StartElement:
			class = ""
			for _, a := range el.Attr {
				if a.Name.Local == "class" {
					class = a.Value
				}
			}
			switch el.Name.Local {
			case "text":
				inText = true
				texts[class] = append(texts[class], "")
			case "path":
				paths[class]++
			}
		case xml.CharData:
			if inText {
				l := texts[class]
				l[len(l)-1] += string(el)
			}
		case xml.EndElement:
			if el.Name.Local == "text" {
				inText = false
			}
		}
	}
	return texts, paths
}

// topOrbits is the default choice, computed from replay CSVs: the
// n orbits with the largest counts at the last checkpoint (lower id first
// on ties) among those non-zero at some listed checkpoint, in id order.
func topOrbits(f *fixture, t *testing.T, node string, n int) []int {
	_, rows := historyCSV(t, "--data", f.data, "--node", node)
	seqs := listedSeqs(t, f, node, rows, f.seqs)
	final := readRowsAt(t, f, f.seqs[len(f.seqs)-1])[node]
	var ids []int
	for o := range final {
		for _, s := range seqs {
			if v, ok := readRowsAt(t, f, s)[node]; ok && v[o] > 0 {
				ids = append(ids, o)
				break
			}
		}
	}
	sort.SliceStable(ids, func(i, j int) bool { return final[ids[i]] > final[ids[j]] })
	ids = ids[:min(n, len(ids))]
	sort.Ints(ids)
	return ids
}

func TestHistoryPlots(t *testing.T) {
	cat, err := catalog.New(delta.Undirected, 4)
	if err != nil {
		t.Fatal(err)
	}
	legend := func(ids []int) []string {
		var out []string
		for _, o := range ids {
			out = append(out, strconv.Itoa(o)+" "+cat.Orbits[o].Name)
		}
		return out
	}
	for _, timed := range []bool{true, false} {
		f := newFixture(t, 22, timed, 100)
		dir := t.TempDir()
		node := "acct-000004"

		svg := filepath.Join(dir, "default.svg")
		mustRunCmd(t, "history", "--data", f.data, "--node", node, "--plot", svg)
		texts, paths := svgText(t, svg)
		want := legend(topOrbits(f, t, node, 6))
		if len(want) != 6 {
			t.Fatalf("fixture: node %q has only %d non-zero orbits", node, len(want))
		}
		if strings.Join(texts["legend"], "|") != strings.Join(want, "|") || paths["series"] != 6 {
			t.Errorf("timed=%v: legend %q with %d series, want %q", timed, texts["legend"], paths["series"], want)
		}
		all, _ := os.ReadFile(svg)
		axis := "by event time"
		if !timed {
			axis = "by log position (seq)"
		}
		if !strings.Contains(string(all), axis) {
			t.Errorf("timed=%v: the chart's title does not say %q", timed, axis)
		}

		svg = filepath.Join(dir, "chosen.svg")
		mustRunCmd(t, "history", "--data", f.data, "--node", node, "--plot", svg, "--orbits", "3,0")
		texts, paths = svgText(t, svg)
		if want := legend([]int{3, 0}); strings.Join(texts["legend"], "|") != strings.Join(want, "|") || paths["series"] != 2 {
			t.Errorf("--orbits 3,0: legend %q with %d series, want %q", texts["legend"], paths["series"], want)
		}

		pngPath := filepath.Join(dir, "chart.png")
		mustRunCmd(t, "history", "--data", f.data, "--node", node, "--plot", pngPath)
		fh, err := os.Open(pngPath)
		if err != nil {
			t.Fatal(err)
		}
		img, err := png.Decode(fh)
		fh.Close()
		if err != nil {
			t.Fatalf("%s does not decode as PNG: %v", pngPath, err)
		}
		if b := img.Bounds(); b.Dx() != plot.Width || b.Dy() != plot.Height {
			t.Errorf("PNG is %v, want %d×%d", b, plot.Width, plot.Height)
		}
	}

	f := newFixture(t, 23, true, 200)
	dir := t.TempDir()
	for _, c := range []struct {
		args []string
		code int
	}{
		{[]string{"--node", "acct-424242", "--plot", filepath.Join(dir, "unknown.svg")}, 1},
		{[]string{"--node", "acct-000001", "--plot", filepath.Join(dir, "chart.gif")}, 2},
	} {
		r := runCmd(t, append([]string{"history", "--data", f.data}, c.args...)...)
		if r.code != c.code {
			t.Errorf("history %v: exit %d, want %d; stderr %q", c.args, r.code, c.code, r.stderr)
		}
	}
	if ents, _ := os.ReadDir(dir); len(ents) != 0 {
		t.Errorf("failed plots left files: %v", ents)
	}
}

func TestLargestOrbits(t *testing.T) {
	v := func(c ...uint64) shard.Version { return shard.Version{Vector: c} }
	for _, c := range []struct {
		name string
		vers []shard.Version
		k    int
		want []int
	}{
		{"largest final counts, in id order", []shard.Version{v(1, 9, 0, 5, 7)}, 2, []int{1, 4}},
		{"ties go to the lower id", []shard.Version{v(3, 3, 3, 1)}, 2, []int{0, 1}},
		{"zero at the end but not before still counts", []shard.Version{v(0, 0, 4), v(1, 0, 0)}, 3, []int{0, 2}},
		{"never non-zero is left out", []shard.Version{v(0, 2, 0), v(0, 1, 0)}, 6, []int{1}},
		{"all zero keeps orbit 0", []shard.Version{v(0, 0, 0)}, 6, []int{0}},
	} {
		if got := largestOrbits(c.vers, c.k); fmt.Sprint(got) != fmt.Sprint(c.want) {
			t.Errorf("%s: %v, want %v", c.name, got, c.want)
		}
	}
}

func TestTimeRangeContains(t *testing.T) {
	t0 := time.Date(2026, 3, 1, 0, 0, 0, 0, time.UTC)
	var none time.Time
	var r timeRange
	if err := r.parse(t0.Format(time.RFC3339), t0.Add(time.Hour).Format(time.RFC3339)); err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		wm   time.Time
		want bool
	}{
		{t0, true}, {t0.Add(time.Hour), true}, {t0.Add(-time.Nanosecond), false},
		{t0.Add(time.Hour + time.Nanosecond), false}, {none, false},
	} {
		if got := r.contains(c.wm); got != c.want {
			t.Errorf("[%v, +1h] contains %v: %v", t0, c.wm, got)
		}
	}
	var upTo timeRange
	if err := upTo.parse("", t0.Format(time.RFC3339)); err != nil {
		t.Fatal(err)
	}
	if !upTo.contains(none) || !upTo.contains(t0) || upTo.contains(t0.Add(time.Second)) {
		t.Error("--to alone: a checkpoint without time is within, later ones are not")
	}
}
