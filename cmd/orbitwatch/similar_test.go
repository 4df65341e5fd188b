package main

import (
	"cmp"
	"encoding/json"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"
	"time"

	"orbitwatch/bench/gen"
	"orbitwatch/delta"
	"orbitwatch/delta/catalog"
	"orbitwatch/delta/gdv"
	"orbitwatch/shard"
	"orbitwatch/shard/api"
)

// edgeLine is one line of a test log: an add or a remove at ts.
type edgeLine struct {
	ts       time.Time
	op       string
	src, dst string
}

// writeEdgeLog writes lines as a CSV edge log and returns its path.
func writeEdgeLog(t *testing.T, dir string, lines []edgeLine) string {
	t.Helper()
	var b strings.Builder
	b.WriteString("ts,op,src,dst\n")
	for _, l := range lines {
		fmt.Fprintf(&b, "%s,%s,%s,%s\n", l.ts.Format(time.RFC3339), l.op, l.src, l.dst)
	}
	path := filepath.Join(dir, "log.csv")
	if err := os.WriteFile(path, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

// twinLog is, on 2026-05-01, a sparse random background over bg accounts
// and two copies of one connected component of size accounts (the second
// relabelled), an event a second; then on 2026-05-02 background churn
// (removes and adds). It returns the lines and each twin-a node's image.
func twinLog(seed uint64, bg, size int) ([]edgeLine, map[string]string) {
	r := rand.New(rand.NewPCG(seed, 2))
	day1 := time.Date(2026, 5, 1, 0, 0, 0, 0, time.UTC)
	var lines []edgeLine
	add := func(day time.Time, op, u, v string) {
		lines = append(lines, edgeLine{day.Add(time.Duration(len(lines)) * time.Second), op, u, v})
	}
	var live [][2]string
	has := map[[2]string]bool{}
	addBG := func(day time.Time) {
		for {
			u, v := r.IntN(bg), r.IntN(bg)
			p := [2]string{fmt.Sprintf("bg-%d", min(u, v)), fmt.Sprintf("bg-%d", max(u, v))}
			if u != v && !has[p] {
				has[p] = true
				live = append(live, p)
				add(day, "add", p[0], p[1])
				return
			}
		}
	}
	for range 2 * bg {
		addBG(day1)
	}
	edges, perm := gen.Twin(r, size)
	image := map[string]string{}
	for i := range size {
		image[fmt.Sprintf("twin-a-%d", i)] = fmt.Sprintf("twin-b-%d", perm[i])
	}
	for _, e := range edges {
		add(day1, "add", fmt.Sprintf("twin-a-%d", e[0]), fmt.Sprintf("twin-a-%d", e[1]))
		add(day1, "add", fmt.Sprintf("twin-b-%d", perm[e[1]]), fmt.Sprintf("twin-b-%d", perm[e[0]]))
	}
	day2 := day1.Add(24 * time.Hour)
	for range bg / 2 {
		k := r.IntN(len(live))
		add(day2, "remove", live[k][0], live[k][1])
		delete(has, live[k])
		live[k] = live[len(live)-1]
		live = live[:len(live)-1]
		addBG(day2)
	}
	return lines, image
}

func similarJSON(t *testing.T, args ...string) api.SimilarJSON {
	t.Helper()
	r := mustRunCmd(t, append([]string{"similar", "--json"}, args...)...)
	var s api.SimilarJSON
	if err := json.Unmarshal([]byte(r.stdout), &s); err != nil {
		t.Fatalf("similar %v: %v: %s", args, err, r.stdout)
	}
	return s
}

// nearestInExport is the answer computed from an exported matrix alone,
// the slow way: the distance (gdv.Metric) from node to every other row
// with at least minDegree neighbours (orbit 0 is the degree), sorted by
// distance and then row, the first k.
func nearestInExport(t *testing.T, names []string, byName map[string][]uint64, node string, k, minDegree int) []api.SimilarNodeJSON {
	t.Helper()
	rows := make([][]uint64, len(names))
	for i, n := range names {
		rows[i] = byName[n]
	}
	cat, err := catalog.New(delta.Undirected, 4)
	if err != nil {
		t.Fatal(err)
	}
	m := gdv.ForCatalog(cat)
	x := slices.Index(names, node)
	sx := m.Signature(nil, rows[x])
	type cand struct {
		y     int
		d     float64
		terms []float64
	}
	var all []cand
	for y, row := range rows {
		if y == x || int(row[0]) < minDegree {
			continue
		}
		terms := make([]float64, m.NumOrbits())
		all = append(all, cand{y, m.Distance(sx, m.Signature(nil, row), terms), terms})
	}
	slices.SortStableFunc(all, func(a, b cand) int { return cmp.Compare(a.d, b.d) })
	out := []api.SimilarNodeJSON{}
	for _, c := range all[:min(k, len(all))] {
		n := api.SimilarNodeJSON{Node: names[c.y], Distance: c.d, Degree: int(rows[c.y][0]), Orbits: []api.OrbitName{}}
		for _, o := range gdv.Largest(c.terms, shard.SimilarOrbits) {
			n.Orbits = append(n.Orbits, api.OrbitName{Orbit: o, Name: cat.Orbits[o].Name, Graphlet: cat.Graphlets[cat.Orbits[o].Graphlet].Name})
		}
		out = append(out, n)
	}
	return out
}

func sameSimilar(a, b []api.SimilarNodeJSON) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i].Node != b[i].Node || a[i].Distance != b[i].Distance || a[i].Degree != b[i].Degree || !slices.Equal(a[i].Orbits, b[i].Orbits) {
			return false
		}
	}
	return true
}

// TestSimilarTwinsAndExport backfills a log with two isomorphic components
// planted in a random background: each twin's nearest signature is its
// image at distance 0; and the nearest lists as of the first day (before
// the background churned) equal those computed from that checkpoint's
// export alone.
func TestSimilarTwinsAndExport(t *testing.T) {
	dir := t.TempDir()
	lines, image := twinLog(3, 150, 9)
	log := writeEdgeLog(t, dir, lines)
	data := filepath.Join(dir, "data")
	mustRunCmd(t, "backfill", "--data", data, "--input", log, "--cut-every", "24h", "--no-alerts")
	matrix := filepath.Join(dir, "day1.csv")
	day1 := "2026-05-01T23:59:59Z"
	mustRunCmd(t, "export", "--data", data, "--at", day1, "--format", "csv", "--out", matrix)
	names, byName := readMatrix(t, matrix)
	for a, b := range image {
		// Precondition of the seed: only the image shares a's vector.
		for n, row := range byName {
			if n != a && n != b && slices.Equal(row, byName[a]) {
				t.Fatalf("%s shares the vector of %s besides its image %s: choose another seed", n, a, b)
			}
		}
		for _, at := range []string{"", day1} {
			args := []string{"--data", data, "--node", a, "--k", "3"}
			if at != "" {
				args = append(args, "--at", at)
			}
			s := similarJSON(t, args...)
			if len(s.Similar) != 3 || s.Similar[0].Node != b || s.Similar[0].Distance != 0 || !(s.Similar[1].Distance > 0) {
				t.Fatalf("similar %v: %+v; want %s first at distance 0, then one above 0", args, s.Similar, b)
			}
		}
	}
	now := similarJSON(t, "--data", data, "--node", "bg-3")
	then := similarJSON(t, "--data", data, "--node", "bg-3", "--at", day1)
	if now.Seq == then.Seq || sameSimilar(now.Similar, then.Similar) {
		t.Fatalf("the churn on day 2 changed nothing for bg-3 (seq %d, %d): the as-of check below would not tell days apart", now.Seq, then.Seq)
	}
	for _, q := range []string{"bg-3", "bg-40", "bg-99", "twin-b-2"} {
		for _, c := range []struct{ k, minDegree int }{{20, 1}, {5, 3}, {400, 0}} {
			s := similarJSON(t, "--data", data, "--node", q, "--at", day1, "--k", strconv.Itoa(c.k), "--min-degree", strconv.Itoa(c.minDegree))
			if want := nearestInExport(t, names, byName, q, c.k, c.minDegree); !sameSimilar(s.Similar, want) {
				t.Fatalf("%s as of %s (k %d, min degree %d):\nsimilar %+v\nexport  %+v", q, day1, c.k, c.minDegree, s.Similar, want)
			}
		}
	}
	// The table names the same nodes in the same order.
	tab := mustRunCmd(t, "similar", "--data", data, "--node", "twin-a-0", "--k", "2")
	if !strings.Contains(tab.stdout, `1     "`+image["twin-a-0"]+`"  0.000000`) {
		t.Errorf("table:\n%s", tab.stdout)
	}
	for _, c := range []struct {
		args []string
		want string
	}{
		{[]string{"--data", data, "--node", "nobody"}, `node "nobody" is not in`},
		{[]string{"--data", data, "--node", "twin-a-0", "--k", "0"}, "--k"},
		{[]string{"--data", data, "--node", "twin-a-0", "--min-degree", "-1"}, "--min-degree"},
		{[]string{"--data", data}, "--node"},
		{[]string{"--data", data, "--node", "twin-a-0", "--at", "2026-04-01T00:00:00Z"}, "no checkpoint"},
	} {
		r := runCmd(t, append([]string{"similar"}, c.args...)...)
		if r.code == 0 || !strings.Contains(r.stderr, c.want) {
			t.Errorf("similar %v: exit %d, stderr %q; want a failure naming %q", c.args, r.code, r.stderr, c.want)
		}
	}
}
