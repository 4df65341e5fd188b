package main

import (
	"encoding/json"
	"regexp"
	"strconv"
	"strings"
	"testing"
	"time"

	"orbitwatch/delta"
	"orbitwatch/delta/catalog"
	"orbitwatch/storage"
)

// queryJSON runs query --json and decodes it, checking the exact key order
// of the issue: node, kind, max_nodes, seq, event_time, orbits.
func queryJSON(t *testing.T, args ...string) NodeVector {
	t.Helper()
	r := mustRunCmd(t, append([]string{"query", "--json"}, args...)...)
	shape := regexp.MustCompile(`^\{"node":"(?:[^"\\]|\\.)*","kind":"[a-z]+","max_nodes":\d+,"seq":\d+,"event_time":(?:null|"[^"]+"),"orbits":\[\d+(?:,\d+)*\]\}\n$`)
	if !shape.MatchString(r.stdout) {
		t.Fatalf("query --json %v printed %q, not the issue's shape", args, r.stdout)
	}
	var nv NodeVector
	if err := json.Unmarshal([]byte(r.stdout), &nv); err != nil {
		t.Fatal(err)
	}
	return nv
}

func TestQueryJSONEqualsReplayCheckpoints(t *testing.T) {
	f := newFixture(t, 11, true, 100)
	last := f.seqs[len(f.seqs)-1]
	if len(f.seqs) < 4 {
		t.Fatalf("fixture too small: checkpoints %v", f.seqs)
	}
	for _, n := range []uint64{100, 300, f.seqs[len(f.seqs)/2], last} {
		order, rows := readMatrix(t, f.replayCSV(n))
		// A few nodes of this checkpoint: first, middle, last, and the ones
		// whose ids need quoting.
		nodes := []string{order[0], order[len(order)/2], order[len(order)-1]}
		for _, x := range order {
			if strings.ContainsAny(x, `", `) {
				nodes = append(nodes, x)
			}
		}
		for _, node := range nodes {
			nv := queryJSON(t, "--data", f.data, "--node", node, "--seq", strconv.FormatUint(n, 10))
			if nv.Node != node || nv.Kind != "undirected" || nv.MaxNodes != 4 || nv.Seq != n {
				t.Errorf("seq %d node %q: header %+v", n, node, nv)
			}
			wm := watermarkAt(t, f.lines, n)
			if nv.EventTime == nil || !nv.EventTime.Equal(wm) {
				t.Errorf("seq %d: event_time %v, the log's watermark is %v", n, nv.EventTime, wm)
			}
			if !equalUints(nv.Orbits, rows[node]) {
				t.Errorf("seq %d node %q: query %v, replay %v", n, node, nv.Orbits, rows[node])
			}
		}
	}
	// A seq between checkpoints reads the one before it.
	nv := queryJSON(t, "--data", f.data, "--node", "acct-000001", "--seq", "299")
	if nv.Seq != 200 {
		t.Errorf("--seq 299 read checkpoint %d, want 200", nv.Seq)
	}
	// No --at/--seq: the latest.
	nv = queryJSON(t, "--data", f.data, "--node", "acct-000001")
	if nv.Seq != last {
		t.Errorf("default read checkpoint %d, want the latest %d", nv.Seq, last)
	}
}

func TestQueryAtTime(t *testing.T) {
	f := newFixture(t, 12, true, 100)
	wm := func(n uint64) time.Time { return watermarkAt(t, f.lines, n) }
	node := "acct-000002"
	cases := []struct {
		name string
		at   string
		want uint64
	}{
		{"exactly at checkpoint 200", wm(200).Format(time.RFC3339), 200},
		{"between 200 and 300", wm(200).Add(time.Second / 2).Format(time.RFC3339Nano), 200},
		{"just before 300", wm(300).Add(-time.Nanosecond).Format(time.RFC3339Nano), 200},
		{"exactly at 300 as Unix seconds", strconv.FormatInt(wm(300).Unix(), 10), 300},
		{"exactly at 100 as Unix milliseconds", strconv.FormatInt(wm(100).UnixMilli(), 10), 100},
		{"after the last", wm(f.seqs[len(f.seqs)-1]).Add(time.Hour).Format(time.RFC3339), f.seqs[len(f.seqs)-1]},
	}
	for _, c := range cases {
		nv := queryJSON(t, "--data", f.data, "--node", node, "--at", c.at)
		if nv.Seq != c.want {
			t.Errorf("%s (--at %s): checkpoint %d, want %d", c.name, c.at, nv.Seq, c.want)
		}
		bySeq := queryJSON(t, "--data", f.data, "--node", node, "--seq", strconv.FormatUint(c.want, 10))
		if !equalUints(nv.Orbits, bySeq.Orbits) {
			t.Errorf("%s: --at vector %v, --seq %d vector %v", c.name, nv.Orbits, c.want, bySeq.Orbits)
		}
	}
	before := wm(100).Add(-time.Second).Format(time.RFC3339)
	r := runCmd(t, "query", "--data", f.data, "--node", node, "--at", before)
	if r.code != 1 || !strings.Contains(r.stderr, "no checkpoint at or before event time") || r.stdout != "" {
		t.Errorf("--at before the first checkpoint: exit %d, stdout %q, stderr %q", r.code, r.stdout, r.stderr)
	}
	r = runCmd(t, "query", "--data", f.data, "--node", node, "--seq", "99")
	if r.code != 1 || !strings.Contains(r.stderr, "first checkpoint is at seq 100") {
		t.Errorf("--seq before the first checkpoint: exit %d, stderr %q", r.code, r.stderr)
	}
	r = runCmd(t, "query", "--data", f.data, "--node", node, "--at", "yesterday")
	if r.code != 2 || !strings.Contains(r.stderr, "--at") {
		t.Errorf("--at yesterday: exit %d, stderr %q", r.code, r.stderr)
	}
	r = runCmd(t, "query", "--data", f.data, "--node", node, "--at", before, "--seq", "100")
	if r.code != 2 || !strings.Contains(r.stderr, "not both") {
		t.Errorf("--at with --seq: exit %d, stderr %q", r.code, r.stderr)
	}
}

func TestQueryTableAndUnknownNode(t *testing.T) {
	f := newFixture(t, 13, false, 150)
	last := f.seqs[len(f.seqs)-1]
	_, rows := readMatrix(t, f.replayCSV(last))
	node := `shop "corner", east`
	want := rows[node]
	cat, err := catalog.New(delta.Undirected, 4)
	if err != nil {
		t.Fatal(err)
	}

	nv := queryJSON(t, "--data", f.data, "--node", node)
	if nv.EventTime != nil {
		t.Errorf("a log without times gave event_time %v, want null", nv.EventTime)
	}

	r := mustRunCmd(t, "query", "--data", f.data, "--node", node)
	lines := strings.Split(strings.TrimSuffix(r.stdout, "\n"), "\n")
	header := "node " + strconv.Quote(node) + "  seq " + strconv.FormatUint(last, 10) + "  event time none"
	if lines[0] != header {
		t.Errorf("header %q, want %q", lines[0], header)
	}
	nonZero := 0
	for o, c := range want {
		if c == 0 {
			continue
		}
		nonZero++
		row := regexp.MustCompile(`(?m)^` + strconv.Itoa(o) + ` +` + strconv.FormatUint(c, 10) + ` +` +
			regexp.QuoteMeta(cat.Orbits[o].Name) + ` +` + regexp.QuoteMeta(cat.Graphlets[cat.Orbits[o].Graphlet].Name) + `$`)
		if !row.MatchString(r.stdout) {
			t.Errorf("table lacks orbit %d with count %d and its names:\n%s", o, c, r.stdout)
		}
	}
	if nonZero == 0 || len(lines) != 2+nonZero {
		t.Errorf("table has %d lines for %d non-zero orbits:\n%s", len(lines), nonZero, r.stdout)
	}
	r = mustRunCmd(t, "query", "--data", f.data, "--node", node, "--all")
	if n := strings.Count(r.stdout, "\n"); n != 2+cat.NumOrbits() {
		t.Errorf("--all printed %d lines, want %d:\n%s", n, 2+cat.NumOrbits(), r.stdout)
	}

	r = runCmd(t, "query", "--data", f.data, "--node", "acct-999999")
	if r.code != 1 || !strings.Contains(r.stderr, `node "acct-999999" is not in`) || r.stdout != "" {
		t.Errorf("unknown node: exit %d, stdout %q, stderr %q", r.code, r.stdout, r.stderr)
	}
	// A node that exists later but not yet at checkpoint 150.
	order, _ := readMatrix(t, f.replayCSV(last))
	lateNode := order[len(order)-1]
	if _, early := readRowsAt(t, f, 150)[lateNode]; early {
		t.Fatalf("fixture: %q already exists at 150", lateNode)
	}
	r = runCmd(t, "query", "--data", f.data, "--node", lateNode, "--seq", "150")
	if r.code != 1 || !strings.Contains(r.stderr, "not in") || !strings.Contains(r.stderr, "checkpoint 150") {
		t.Errorf("node not yet known: exit %d, stderr %q", r.code, r.stderr)
	}
	r = runCmd(t, "query", "--data", f.data)
	if r.code != 2 || !strings.Contains(r.stderr, "--node") {
		t.Errorf("no --node: exit %d, stderr %q", r.code, r.stderr)
	}
}

func readRowsAt(t *testing.T, f *fixture, n uint64) map[string][]uint64 {
	_, rows := readMatrix(t, f.replayCSV(n))
	return rows
}

func equalUints(a, b []uint64) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

// TestReadsBeforeRetention moves the retention floor past the first
// checkpoints: reads before it say so instead of answering from what is
// left, and history starts at the floor.
func TestReadsBeforeRetention(t *testing.T) {
	f := newFixture(t, 14, true, 100)
	st, err := storage.Open(f.data, storage.Settings{Kind: delta.Undirected, MaxNodes: 4, NumOrbits: 15})
	if err != nil {
		t.Fatal(err)
	}
	if err := st.SetDiscardBefore(300); err != nil {
		t.Fatal(err)
	}
	if err := st.Close(); err != nil {
		t.Fatal(err)
	}
	node := "acct-000001"
	r := runCmd(t, "query", "--data", f.data, "--node", node, "--seq", "250")
	if r.code != 1 || !strings.Contains(r.stderr, "before the retained history, which starts at checkpoint 300") {
		t.Errorf("--seq 250 under floor 300: exit %d, stderr %q", r.code, r.stderr)
	}
	at := watermarkAt(t, f.lines, 200).Format(time.RFC3339)
	r = runCmd(t, "query", "--data", f.data, "--node", node, "--at", at)
	if r.code != 1 || !strings.Contains(r.stderr, "(seq 200) is before the retained history") {
		t.Errorf("--at the time of 200 under floor 300: exit %d, stderr %q", r.code, r.stderr)
	}
	nv := queryJSON(t, "--data", f.data, "--node", node, "--seq", "300")
	if want := readRowsAt(t, f, 300)[node]; nv.Seq != 300 || !equalUints(nv.Orbits, want) {
		t.Errorf("--seq 300 at the floor: seq %d %v, replay %v", nv.Seq, nv.Orbits, want)
	}
	_, rows := historyCSV(t, "--data", f.data, "--node", node)
	checkHistoryRows(t, f, node, allOrbits(15), rows, f.seqs[2:])
}
