package gdv_test

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"orbitwatch/bench/gen"
	"orbitwatch/delta"
	"orbitwatch/delta/gdv"
	"orbitwatch/delta/undirected"
)

// ba returns a Barabási–Albert graph made by bench/gen.
func ba(n, m int, seed uint64) *delta.Graph {
	g := delta.NewGraph(delta.Undirected)
	g.Grow(n)
	for _, e := range gen.BarabasiAlbert(n, m, seed) {
		g.Link(e.U, e.V)
	}
	return g
}

// orbits4 counts the 15 orbits of every node with the static recount.
func orbits4(g *delta.Graph) *delta.Vectors { return undirected.NewRecounter(4).Recount(g) }

func profile(t testing.TB, v *delta.Vectors) *gdv.Profile {
	t.Helper()
	p, err := gdv.NewProfile(v, gdv.GCD11Orbits())
	if err != nil {
		t.Fatal(err)
	}
	return p
}

func drift(t testing.TB, a, b *gdv.Profile) gdv.Drift {
	t.Helper()
	d, err := gdv.Compare(a, b)
	if err != nil {
		t.Fatal(err)
	}
	return d
}

// TestDriftAgainstScipy holds every correlation, the GCD-11, the
// constant-orbit flags and every distribution figure against numpy and
// scipy.stats (spearmanr, ks_2samp) on the same matrices: a BA graph
// (bench/gen), random geometric graphs (networkx, with isolated nodes)
// and a grid (networkx; no triangles, so orbits 9–11 are constant).
func TestDriftAgainstScipy(t *testing.T) {
	py := python(t)
	m := map[string]*delta.Vectors{
		"ba":    orbits4(ba(600, 3, 1)),
		"rgg":   orbits4(fromNetworkx(t, py, "rgg", 600, 0.06, 1)),
		"rgg2":  orbits4(fromNetworkx(t, py, "rgg", 500, 0.05, 2)),
		"grid":  orbits4(fromNetworkx(t, py, "grid", 20, 25, 0)),
		"small": orbits4(ba(12, 2, 3)),
	}
	const tol = 1e-9
	worst := 0.0 // the largest difference seen in a correlation or a GCD
	for _, pair := range [][2]string{{"ba", "rgg"}, {"rgg", "rgg2"}, {"ba", "grid"}, {"grid", "small"}, {"ba", "ba"}} {
		a, b := m[pair[0]], m[pair[1]]
		pa, pb := profile(t, a), profile(t, b)
		d := drift(t, pa, pb)
		ref := fromScipy(t, py, a, b)
		name := pair[0] + "→" + pair[1]
		worst = max(worst, math.Abs(d.GCD-ref.GCD))
		if math.Abs(d.GCD-ref.GCD) > tol {
			t.Errorf("%s: GCD-11 %v, scipy %v", name, d.GCD, ref.GCD)
		}
		for side, c := range []struct {
			p   *gdv.Profile
			ref scipyProfile
		}{{pa, ref.A}, {pb, ref.B}} {
			if c.p.Nodes != c.ref.Nodes {
				t.Fatalf("%s side %d: %d nodes, numpy %d", name, side, c.p.Nodes, c.ref.Nodes)
			}
			if !slices.Equal(c.p.Constant, c.ref.Undefined) {
				t.Errorf("%s side %d: constant %v, scipy undefined %v", name, side, c.p.Constant, c.ref.Undefined)
			}
			for i, r := range c.ref.Corr {
				worst = max(worst, math.Abs(c.p.Corr[i]-r))
				if math.Abs(c.p.Corr[i]-r) > tol {
					t.Errorf("%s side %d: ρ(%d,%d) = %v, scipy %v", name, side, i/11, i%11, c.p.Corr[i], r)
				}
			}
			for o, dist := range c.p.Dists {
				q := c.ref.Quantiles[o]
				if got := [4]float64{dist.P50, dist.P90, dist.P99, dist.Max}; got != q {
					t.Errorf("%s side %d orbit %d: p50/p90/p99/max %v, numpy %v", name, side, o, got, q)
				}
				if math.Abs(dist.NonZero-c.ref.NonZero[o]) > tol {
					t.Errorf("%s side %d orbit %d: non-zero share %v, numpy %v", name, side, o, dist.NonZero, c.ref.NonZero[o])
				}
			}
		}
		for o, s := range d.Shifts {
			if math.Abs(s.KS-ref.KS[o]) > tol {
				t.Errorf("%s orbit %d: KS %v, scipy %v", name, o, s.KS, ref.KS[o])
			}
		}
		t.Logf("%s: GCD-11 %.6f (scipy %.6f)", name, d.GCD, ref.GCD)
	}
	t.Logf("largest difference from scipy: %.3g", worst)
}

// TestGeneratorsApart: networks from different generators are further
// apart than two seeds of one: Barabási–Albert (bench/gen, m = 5) and
// random geometric graphs (networkx, mean degree about 10), 1,000 nodes,
// three seeds each.
func TestGeneratorsApart(t *testing.T) {
	py := python(t)
	var bas, rggs []*gdv.Profile
	for seed := range 3 {
		bas = append(bas, profile(t, orbits4(ba(1000, 5, uint64(seed+1)))))
		rggs = append(rggs, profile(t, orbits4(fromNetworkx(t, py, "rgg", 1000, 0.0564, seed+1))))
	}
	within, across := 0.0, math.Inf(1)
	for i := range 3 {
		for j := range 3 {
			if i < j {
				within = max(within, drift(t, bas[i], bas[j]).GCD, drift(t, rggs[i], rggs[j]).GCD)
			}
			across = min(across, drift(t, bas[i], rggs[j]).GCD)
		}
	}
	t.Logf("GCD-11 within a generator ≤ %.4f, across ≥ %.4f", within, across)
	if !(within < across) {
		t.Fatalf("largest GCD-11 between seeds of one generator %v ≥ smallest between generators %v", within, across)
	}
}

// TestProfileInvariants: a matrix is at distance 0 from itself; the
// order of its rows and rows of all zeros (nodes without edges) do not
// change its profile.
func TestProfileInvariants(t *testing.T) {
	v := orbits4(ba(800, 4, 7))
	p := profile(t, v)
	if d := drift(t, p, p); d.GCD != 0 || slices.ContainsFunc(d.Shifts, func(s gdv.Shift) bool { return s.KS != 0 }) {
		t.Fatalf("drift of a matrix from itself: GCD %v, shifts %+v", d.GCD, d.Shifts)
	}
	r := rand.New(rand.NewPCG(1, 2))
	n := v.NumNodes()
	w := delta.NewVectors(n+300, v.NumOrbits())
	for i, x := range r.Perm(n + 300) {
		if x < n {
			copy(w.Row(uint32(i)), v.Row(uint32(x)))
		}
	}
	q := profile(t, w)
	if q.Nodes != p.Nodes {
		t.Fatalf("nodes %d after shuffling and padding, want %d", q.Nodes, p.Nodes)
	}
	if d := drift(t, p, q); d.GCD > 1e-12 || !slices.Equal(q.Dists, p.Dists) {
		t.Fatalf("after shuffling and padding: GCD %v, distributions equal %v", d.GCD, slices.Equal(q.Dists, p.Dists))
	}
}

// TestConstantOrbits: the rule of NewProfile on matrices built by hand.
// An orbit with one count everywhere is flagged, correlates 0 with every
// other orbit, and two networks that both have it constant differ by the
// GCD over the remaining orbits alone.
func TestConstantOrbits(t *testing.T) {
	mat := func(rows ...[]uint64) *delta.Vectors {
		v := delta.NewVectors(len(rows), 3)
		for x, r := range rows {
			copy(v.Row(uint32(x)), r)
		}
		return v
	}
	orbits := []int{0, 1, 2}
	// Orbit 2 is 5 everywhere; orbits 0 and 1 rise together (ρ = 1).
	a := mat([]uint64{1, 1, 5}, []uint64{2, 3, 5}, []uint64{3, 4, 5}, []uint64{0, 0, 0})
	// Orbit 2 is 0 everywhere; orbit 1 falls as orbit 0 rises (ρ = −1).
	b := mat([]uint64{1, 9, 0}, []uint64{2, 3, 0}, []uint64{4, 1, 0})
	pa, err := gdv.NewProfile(a, orbits)
	if err != nil {
		t.Fatal(err)
	}
	pb, err := gdv.NewProfile(b, orbits)
	if err != nil {
		t.Fatal(err)
	}
	wantA := []float64{1, 1, 0, 1, 1, 0, 0, 0, 1}
	if pa.Nodes != 3 || !slices.Equal(pa.Corr, wantA) || !slices.Equal(pa.Constant, []bool{false, false, true}) {
		t.Fatalf("profile a: nodes %d corr %v constant %v; want 3, %v, [false false true]", pa.Nodes, pa.Corr, pa.Constant, wantA)
	}
	d := drift(t, pa, pb)
	if math.Abs(d.GCD-2) > 1e-12 {
		t.Fatalf("GCD %v, want 2 (ρ01 from 1 to −1, the constant orbit adding nothing)", d.GCD)
	}
	if d.Pairs[0] != (gdv.PairMove{A: 0, B: 1, Before: 1, After: pb.Corr[1]}) {
		t.Fatalf("largest pair move %+v, want orbits 0–1 from 1 to −1", d.Pairs[0])
	}
	// One node, or none: every orbit constant, every correlation 0.
	for _, v := range []*delta.Vectors{mat([]uint64{3, 1, 2}), mat([]uint64{0, 0, 0}), mat()} {
		p, err := gdv.NewProfile(v, orbits)
		if err != nil {
			t.Fatal(err)
		}
		if !slices.Equal(p.Constant, []bool{true, true, true}) || !slices.Equal(p.Corr, []float64{1, 0, 0, 0, 1, 0, 0, 0, 1}) {
			t.Fatalf("profile of %d nodes: constant %v corr %v", p.Nodes, p.Constant, p.Corr)
		}
	}
	if _, err := gdv.NewProfile(a, []int{0, 3}); err == nil {
		t.Fatalf("an orbit beyond the matrix was accepted")
	}
	pc, err := gdv.NewProfile(a, []int{0, 1})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := gdv.Compare(pa, pc); err == nil {
		t.Fatalf("profiles over different orbits were compared")
	}
}
