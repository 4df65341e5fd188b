package undirected

import (
	"math/rand/v2"
	"testing"

	"orbitwatch/delta"
)

// graphOf returns an undirected graph on n nodes with the given edges.
func graphOf(n int, edges [][2]uint32) *delta.Graph {
	g := delta.NewGraph(delta.Undirected)
	g.Grow(n)
	for _, e := range edges {
		g.Link(e[0], e[1])
	}
	return g
}

// randomGraph links each pair of n nodes with probability p.
func randomGraph(rng *rand.Rand, n int, p float64) *delta.Graph {
	g := delta.NewGraph(delta.Undirected)
	g.Grow(n)
	for u := range uint32(n) {
		for v := u + 1; v < uint32(n); v++ {
			if rng.Float64() < p {
				g.Link(u, v)
			}
		}
	}
	return g
}

// toggle runs one engine event on uv (an insert if g lacks uv, else a
// delete), applies it to g and returns the summed changes as a dense
// nodes × orbits matrix of int64.
func toggle(t testing.TB, e delta.Engine, g *delta.Graph, u, v uint32) [][]int64 {
	t.Helper()
	d := make([][]int64, g.NumNodes())
	for i := range d {
		d[i] = make([]int64, e.NumOrbits())
	}
	emit := func(x uint32, o int, k int64) {
		if o < 0 || o >= e.NumOrbits() {
			t.Fatalf("emitted orbit %d out of range", o)
		}
		d[x][o] += k
	}
	edges := g.NumEdges()
	insert := !g.HasEdge(u, v)
	if insert {
		e.Insert(g, u, v, emit)
	} else {
		e.Delete(g, u, v, emit)
	}
	if g.NumEdges() != edges || g.HasEdge(u, v) == insert {
		t.Fatalf("engine changed the graph on %d-%d", u, v)
	}
	if insert {
		g.Link(u, v)
	} else {
		g.Unlink(u, v)
	}
	return d
}

// checkStep asserts that after − before == d for every count.
func checkStep(t testing.TB, step int, before, after *delta.Vectors, d [][]int64) {
	t.Helper()
	for x := range d {
		for o, k := range d[x] {
			want := int64(after.Get(uint32(x), o) - before.Get(uint32(x), o))
			if k != want {
				t.Fatalf("step %d: node %d orbit %d: engine change %d, reference change %d (before %d after %d)",
					step, x, o, k, want, before.Get(uint32(x), o), after.Get(uint32(x), o))
			}
		}
	}
}

// applyTo adds d to vec, failing on an invariant violation.
func applyTo(t testing.TB, vec *delta.Vectors, d [][]int64) {
	t.Helper()
	vec.Grow(len(d))
	for x := range d {
		for o, k := range d[x] {
			if err := vec.Add(uint32(x), o, k); err != nil {
				t.Fatal(err)
			}
		}
	}
}

// mustEqual fails with the first differing count.
func mustEqual(t testing.TB, what string, got, want *delta.Vectors) {
	t.Helper()
	if x, o, a, b, ok := got.FirstDiff(want); !ok {
		t.Fatalf("%s: node %d orbit %d: got %d, want %d", what, x, o, a, b)
	}
}

// randomPair returns two distinct nodes below n.
func randomPair(rng *rand.Rand, n int) (uint32, uint32) {
	u := uint32(rng.IntN(n))
	v := uint32(rng.IntN(n - 1))
	if v >= u {
		v++
	}
	return u, v
}
