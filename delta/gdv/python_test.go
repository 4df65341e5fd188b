package gdv_test

import (
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"orbitwatch/bench"
	"orbitwatch/delta"
)

// python returns the interpreter of the outside references (bench.Python:
// ORBITWATCH_PYTHON, else /usr/bin/python3, with networkx and igraph).
// Without scipy the test is skipped, saying so: the references are
// scipy.stats (Debian's python3-scipy, which CI installs) and networkx.
func python(t *testing.T) string {
	t.Helper()
	py, err := bench.PythonWith("scipy.stats, numpy")
	if err != nil {
		t.Skipf("SKIPPED: %v; install Debian's python3-networkx and python3-scipy or set ORBITWATCH_PYTHON to run the scipy reference checks", err)
	}
	return py
}

// runPython runs script with args and decodes its JSON standard output
// into out.
func runPython(t *testing.T, py, script string, out any, args ...string) {
	t.Helper()
	if err := bench.RunPythonJSON(py, script, out, args...); err != nil {
		t.Fatal(err)
	}
}

// networkxGraph is a graph made by networkx (2.8): "rgg" is
// random_geometric_graph(n, radius=p, seed=seed), "grid" is
// grid_2d_graph(n, int(p)) relabelled to 0..n·p−1.
const networkxGraph = `
import json, sys
import networkx as nx
kind, n, p, seed = sys.argv[1], int(sys.argv[2]), float(sys.argv[3]), int(sys.argv[4])
if kind == "rgg":
    g = nx.random_geometric_graph(n, p, seed=seed)
elif kind == "grid":
    g = nx.convert_node_labels_to_integers(nx.grid_2d_graph(n, int(p)))
else:
    raise SystemExit("unknown kind " + kind)
json.dump({"n": g.number_of_nodes(), "edges": [[int(u), int(v)] for u, v in g.edges()]}, sys.stdout)
`

func fromNetworkx(t *testing.T, py, kind string, n int, p float64, seed int) *delta.Graph {
	t.Helper()
	var r struct {
		N     int         `json:"n"`
		Edges [][2]uint32 `json:"edges"`
	}
	runPython(t, py, networkxGraph, &r, kind, fmt.Sprint(n), fmt.Sprint(p), fmt.Sprint(seed))
	g := delta.NewGraph(delta.Undirected)
	g.Grow(r.N)
	for _, e := range r.Edges {
		g.Link(e[0], e[1])
	}
	return g
}

// writeMatrix writes v as CSV, one row of counts per node, no header.
func writeMatrix(t *testing.T, path string, v *delta.Vectors) {
	t.Helper()
	var b strings.Builder
	for x := range uint32(v.NumNodes()) {
		for o, c := range v.Row(x) {
			if o > 0 {
				b.WriteByte(',')
			}
			fmt.Fprint(&b, c)
		}
		b.WriteByte('\n')
	}
	if err := os.WriteFile(path, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
}

// scipyDrift is the drift between two orbit-matrix CSV files computed with
// numpy and scipy alone, from the definitions (not from this package):
// rows of all zeros dropped; scipy.stats.spearmanr over the GCD-11
// columns; a column whose own correlation it reports as NaN (a constant
// column) is listed as undefined, and every NaN is set to 0 (this
// package's documented rule); GCD the
// Euclidean distance of the upper triangles; per orbit the share of
// non-zero counts, numpy.quantile(method="inverted_cdf") at 0.5, 0.9,
// 0.99, the maximum, and scipy.stats.ks_2samp's statistic.
const scipyDrift = `
import json, sys, warnings
import numpy as np
from scipy import stats
orbits = [0, 1, 2, 4, 5, 6, 7, 8, 9, 10, 11]

def load(path):
    m = np.loadtxt(path, delimiter=",", dtype=np.float64, ndmin=2)
    return m[np.any(m != 0, axis=1)]

def profile(m):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        rho = np.array(stats.spearmanr(m[:, orbits]).correlation, dtype=np.float64)
    undefined = [bool(np.isnan(rho[j, j])) for j in range(len(orbits))]
    rho = np.where(np.isnan(rho), 0.0, rho)
    np.fill_diagonal(rho, 1.0)
    q = [[float(np.quantile(m[:, o], p, method="inverted_cdf")) for p in (0.5, 0.9, 0.99)] + [float(m[:, o].max())]
         for o in range(m.shape[1])]
    nonzero = [float(np.count_nonzero(m[:, o])) / m.shape[0] for o in range(m.shape[1])]
    return rho, {"nodes": m.shape[0], "corr": rho.ravel().tolist(), "undefined": undefined, "quantiles": q, "nonzero": nonzero}

a, b = load(sys.argv[1]), load(sys.argv[2])
ra, pa = profile(a)
rb, pb = profile(b)
iu = np.triu_indices(len(orbits), 1)
gcd = float(np.sqrt(np.sum((ra[iu] - rb[iu]) ** 2)))
ks = [float(stats.ks_2samp(a[:, o], b[:, o]).statistic) for o in range(a.shape[1])]
json.dump({"a": pa, "b": pb, "gcd": gcd, "ks": ks}, sys.stdout)
`

type scipyProfile struct {
	Nodes     int          `json:"nodes"`
	Corr      []float64    `json:"corr"`
	Undefined []bool       `json:"undefined"`
	Quantiles [][4]float64 `json:"quantiles"`
	NonZero   []float64    `json:"nonzero"`
}

type scipyResult struct {
	A, B scipyProfile
	GCD  float64   `json:"gcd"`
	KS   []float64 `json:"ks"`
}

// fromScipy writes a and b to a temporary directory and runs scipyDrift.
func fromScipy(t *testing.T, py string, a, b *delta.Vectors) scipyResult {
	t.Helper()
	dir := t.TempDir()
	pa, pb := filepath.Join(dir, "a.csv"), filepath.Join(dir, "b.csv")
	writeMatrix(t, pa, a)
	writeMatrix(t, pb, b)
	var r scipyResult
	runPython(t, py, scipyDrift, &r, pa, pb)
	return r
}
