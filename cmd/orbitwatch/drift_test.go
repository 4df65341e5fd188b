package main

import (
	"encoding/json"
	"fmt"
	"math"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"

	"orbitwatch/bench"
	"orbitwatch/bench/gen"
	"orbitwatch/shard/api"
)

// scipyPython returns the interpreter of the outside references
// (bench.Python: networkx and igraph), skipping the test, saying so, when
// it cannot also import scipy (Debian's python3-scipy, which CI installs).
func scipyPython(t *testing.T) string {
	t.Helper()
	py, err := bench.PythonWith("scipy.stats, numpy")
	if err != nil {
		t.Skipf("SKIPPED: no Python with networkx and scipy (%v); install python3-networkx and python3-scipy or set ORBITWATCH_PYTHON to run the scipy reference checks", err)
	}
	return py
}

func runPython(t *testing.T, py, script string, out any, args ...string) {
	t.Helper()
	if err := bench.RunPythonJSON(py, script, out, args...); err != nil {
		t.Fatal(err)
	}
}

// networkxRGG prints the edges of networkx.random_geometric_graph(n,
// radius, seed=seed) (networkx 2.8) as JSON.
const networkxRGG = `
import json, sys
import networkx as nx
g = nx.random_geometric_graph(int(sys.argv[1]), float(sys.argv[2]), seed=int(sys.argv[3]))
json.dump([[int(u), int(v)] for u, v in g.edges()], sys.stdout)
`

// scipyGCD computes, from orbit-matrix CSV files that export wrote and
// with numpy and scipy alone, every pairwise GCD-11: rows of all zeros
// dropped, scipy.stats.spearmanr over the columns of orbits 0, 1, 2, 4, 5,
// 6, 7, 8, 9, 10, 11 (the set of Yaveroğlu et al. 2014, recalled from
// memory), a NaN (a constant column) taken as 0, the Euclidean distance
// of the upper triangles; and scipy.stats.ks_2samp's statistic per orbit.
const scipyGCD = `
import csv, json, sys, warnings
import numpy as np
from scipy import stats
orbits = [0, 1, 2, 4, 5, 6, 7, 8, 9, 10, 11]

def load(path):
    with open(path, newline="") as f:
        r = csv.reader(f)
        next(r)
        m = np.array([[float(x) for x in row[1:]] for row in r], dtype=np.float64)
    return m[np.any(m != 0, axis=1)]

def corr(m):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        rho = np.array(stats.spearmanr(m[:, orbits]).correlation, dtype=np.float64)
    return np.where(np.isnan(rho), 0.0, rho)

mats = [load(p) for p in sys.argv[1:]]
cs = [corr(m) for m in mats]
iu = np.triu_indices(len(orbits), 1)
json.dump({
    "nodes": [int(m.shape[0]) for m in mats],
    "gcd": [[float(np.sqrt(np.sum((a[iu] - b[iu]) ** 2))) for b in cs] for a in cs],
    "ks": [[[float(stats.ks_2samp(a[:, o], b[:, o]).statistic) for o in range(a.shape[1])] for b in mats] for a in mats],
}, sys.stdout)
`

// threeNetworks writes a log of three networks of 300 accounts, one a day
// (2026-05-01, 02, 03), each day removing the last day's edges first:
// Barabási–Albert m = 3 with seed 1 ("a-…"), the same with seed 2
// ("b-…") (bench/gen), and networkx's random geometric graph of radius
// 0.1 ("r-…"). It returns the log and the sequence number each day ends
// at.
func threeNetworks(t *testing.T, py, dir string) (string, [3]uint64) {
	t.Helper()
	var rgg [][2]int
	runPython(t, py, networkxRGG, &rgg, "300", "0.1", "1")
	nets := [3][][2]int{}
	for i, seed := range []uint64{1, 2} {
		for _, e := range gen.BarabasiAlbert(300, 3, seed) {
			nets[i] = append(nets[i], [2]int{int(e.U), int(e.V)})
		}
	}
	nets[2] = rgg
	var lines []edgeLine
	var ends [3]uint64
	day := time.Date(2026, 5, 1, 0, 0, 0, 0, time.UTC)
	for i, prefix := range []string{"a", "b", "r"} {
		at := func() time.Time {
			return day.Add(time.Duration(i)*24*time.Hour + time.Duration(len(lines))*time.Second)
		}
		if i > 0 {
			for _, e := range nets[i-1] {
				lines = append(lines, edgeLine{at(), "remove", fmt.Sprintf("%s-%d", []string{"a", "b"}[i-1], e[0]), fmt.Sprintf("%s-%d", []string{"a", "b"}[i-1], e[1])})
			}
		}
		for _, e := range nets[i] {
			lines = append(lines, edgeLine{at(), "add", fmt.Sprintf("%s-%d", prefix, e[0]), fmt.Sprintf("%s-%d", prefix, e[1])})
		}
		ends[i] = uint64(len(lines))
	}
	return writeEdgeLog(t, dir, lines), ends
}

func driftJSON(t *testing.T, args ...string) api.DriftJSON {
	t.Helper()
	r := mustRunCmd(t, append([]string{"drift", "--json"}, args...)...)
	var d api.DriftJSON
	if err := json.Unmarshal([]byte(r.stdout), &d); err != nil {
		t.Fatalf("drift %v: %v: %s", args, err, r.stdout)
	}
	return d
}

// TestDriftAgainstScipy backfills three networks, one a day, and holds
// drift between every two checkpoints against scipy on the checkpoints'
// exported orbit matrices (GCD-11 within 1e-9, every orbit's KS
// statistic); a checkpoint is at 0 from itself; two seeds of one
// generator are nearer than Barabási–Albert and a random geometric graph;
// the series over the days gives the same distances, as a table, CSV and
// a chart.
func TestDriftAgainstScipy(t *testing.T) {
	py := scipyPython(t)
	dir := t.TempDir()
	log, ends := threeNetworks(t, py, dir)
	data := filepath.Join(dir, "data")
	mustRunCmd(t, "backfill", "--data", data, "--input", log, "--cut-every", "24h", "--no-alerts")
	var csvs []string
	for i, seq := range ends {
		p := filepath.Join(dir, fmt.Sprintf("day%d.csv", i+1))
		mustRunCmd(t, "export", "--data", data, "--seq", strconv.FormatUint(seq, 10), "--format", "csv", "--out", p)
		csvs = append(csvs, p)
	}
	var ref struct {
		Nodes []int         `json:"nodes"`
		GCD   [][]float64   `json:"gcd"`
		KS    [][][]float64 `json:"ks"`
	}
	runPython(t, py, scipyGCD, &ref, csvs...)
	const tol = 1e-9
	var got [3][3]float64
	for i := range ends {
		for j := range ends {
			d := driftJSON(t, "--data", data, "--from-seq", strconv.FormatUint(ends[i], 10), "--to-seq", strconv.FormatUint(ends[j], 10))
			if d.From.Seq != ends[i] || d.To.Seq != ends[j] || d.From.Nodes != ref.Nodes[i] || d.To.Nodes != ref.Nodes[j] {
				t.Fatalf("day %d→%d: checkpoints %d→%d with %d→%d nodes, want %d→%d with %d→%d", i+1, j+1,
					d.From.Seq, d.To.Seq, d.From.Nodes, d.To.Nodes, ends[i], ends[j], ref.Nodes[i], ref.Nodes[j])
			}
			got[i][j] = d.GCD11
			if math.Abs(d.GCD11-ref.GCD[i][j]) > tol {
				t.Errorf("day %d→%d: GCD-11 %v, scipy %v", i+1, j+1, d.GCD11, ref.GCD[i][j])
			}
			for _, s := range d.Shifts {
				if math.Abs(s.KS-ref.KS[i][j][s.Orbit]) > tol {
					t.Errorf("day %d→%d orbit %d: KS %v, scipy.stats.ks_2samp %v", i+1, j+1, s.Orbit, s.KS, ref.KS[i][j][s.Orbit])
				}
			}
		}
		if got[i][i] != 0 {
			t.Errorf("day %d is at %v from itself", i+1, got[i][i])
		}
	}
	t.Logf("GCD-11: BA seed 1 → BA seed 2 %.4f, BA seed 2 → RGG %.4f, BA seed 1 → RGG %.4f", got[0][1], got[1][2], got[0][2])
	if !(got[0][1] < got[1][2] && got[0][1] < got[0][2]) {
		t.Errorf("two BA seeds at %v, BA and RGG at %v and %v: the generators are not told apart", got[0][1], got[1][2], got[0][2])
	}
	// The defaults are the first and the last checkpoint; times work too.
	if d := driftJSON(t, "--data", data); d.From.Seq != ends[0] || d.To.Seq != ends[2] || d.GCD11 != got[0][2] {
		t.Errorf("defaults: %d→%d at %v", d.From.Seq, d.To.Seq, d.GCD11)
	}
	if d := driftJSON(t, "--data", data, "--from", "2026-05-01T23:00:00Z", "--to", "2026-05-02T23:00"); d.From.Seq != ends[0] || d.To.Seq != ends[1] {
		t.Errorf("--from 2026-05-01T23:00 --to 2026-05-02T23:00: %d→%d, want %d→%d", d.From.Seq, d.To.Seq, ends[0], ends[1])
	}

	svg := filepath.Join(dir, "drift.svg")
	r := mustRunCmd(t, "drift", "--data", data, "--every", "1d", "--from", "2026-05-01T23:59:59Z", "--to", "2026-05-03T23:59:59Z", "--json", "--plot", svg)
	var ser api.DriftSeriesJSON
	if err := json.Unmarshal([]byte(r.stdout), &ser); err != nil {
		t.Fatal(err)
	}
	if len(ser.Points) != 3 {
		t.Fatalf("series: %d points, want 3: %s", len(ser.Points), r.stdout)
	}
	for i, p := range ser.Points {
		prev := 0.0
		if i > 0 {
			prev = got[i-1][i]
		}
		if p.Seq != ends[i] || p.GCD11Previous != prev || p.GCD11First != got[0][i] {
			t.Errorf("point %d: seq %d, from previous %v, from first %v; want %d, %v, %v", i, p.Seq, p.GCD11Previous, p.GCD11First, ends[i], prev, got[0][i])
		}
	}
	texts, paths := svgText(t, svg)
	if paths["series"] != 2 || len(texts["legend"]) != 2 {
		t.Errorf("chart: %d series, legend %q", paths["series"], texts["legend"])
	}
	c := mustRunCmd(t, "drift", "--data", data, "--every", "1d", "--from", "2026-05-01T23:59:59Z", "--to", "2026-05-03T23:59:59Z", "--csv")
	rows := strings.Split(strings.TrimSpace(c.stdout), "\n")
	if len(rows) != 4 || rows[0] != "at,seq,event_time,nodes,gcd11_previous,gcd11_first" ||
		!strings.HasSuffix(rows[3], ","+strconv.FormatFloat(got[0][2], 'g', -1, 64)) {
		t.Errorf("csv:\n%s", c.stdout)
	}
	table := mustRunCmd(t, "drift", "--data", data, "--from-seq", strconv.FormatUint(ends[0], 10), "--to-seq", strconv.FormatUint(ends[2], 10))
	if !strings.Contains(table.stdout, fmt.Sprintf(": %.6f\n", got[0][2])) || !strings.Contains(table.stdout, "orbit pairs whose Spearman correlation moved most") {
		t.Errorf("table:\n%s", table.stdout)
	}

	for _, c := range []struct {
		args []string
		want string
	}{
		{[]string{"--from-seq", "5"}, "no complete cut"},
		{[]string{"--from", "2026-04-01"}, "no complete cut"},
		{[]string{"--from", "2026-05-01", "--from-seq", "5"}, "not both"},
		{[]string{"--csv"}, "--every"},
		{[]string{"--every", "1d", "--plot", filepath.Join(dir, "x.gif")}, ".svg or .png"},
		{[]string{"--every", "1s"}, "at most"},
	} {
		r := runCmd(t, append([]string{"drift", "--data", data}, c.args...)...)
		if r.code == 0 || !strings.Contains(r.stderr, c.want) {
			t.Errorf("drift %v: exit %d, stderr %q; want a failure naming %q", c.args, r.code, r.stderr, c.want)
		}
	}
}

// TestDriftRefusesOtherKinds: GCD-11 needs the undirected 2–4 node orbits;
// a directed data directory is refused by name.
func TestDriftRefusesOtherKinds(t *testing.T) {
	dir := t.TempDir()
	log := writeEdgeLog(t, dir, []edgeLine{{time.Date(2026, 5, 1, 0, 0, 0, 0, time.UTC), "add", "a", "b"}})
	data := filepath.Join(dir, "data")
	mustRunCmd(t, "backfill", "--data", data, "--input", log, "--kind", "directed", "--max-nodes", "3", "--no-alerts")
	r := runCmd(t, "drift", "--data", data)
	if r.code != 1 || !strings.Contains(r.stderr, "--kind undirected with --max-nodes 4 or 5") {
		t.Errorf("drift on a directed directory: exit %d, stderr %q", r.code, r.stderr)
	}
}
