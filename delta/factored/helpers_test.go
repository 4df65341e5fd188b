package factored

import (
	"math/rand/v2"
	"testing"

	"orbitwatch/bench/gen"
	"orbitwatch/delta"
	"orbitwatch/delta/brute"
	"orbitwatch/delta/catalog"
	"orbitwatch/delta/undirected"
)

// apply runs one event on uv through c (an insert if g lacks uv, else a
// delete) and then changes g accordingly.
func apply(c *Counter, g *delta.Graph, u, v uint32) {
	var err error
	if g.HasEdge(u, v) {
		err = c.Delete(g, u, v)
		g.Unlink(u, v)
	} else {
		err = c.Insert(g, u, v, false)
		g.Link(u, v)
	}
	if err != nil {
		panic(err)
	}
}

// randomPair returns two distinct nodes below n.
func randomPair(rng *rand.Rand, n int) (uint32, uint32) {
	u := rng.IntN(n)
	return uint32(u), uint32((u + 1 + rng.IntN(n-1)) % n)
}

// baGraph returns the seeded Barabási–Albert graph of bench/gen.
func baGraph(n, m int, seed uint64) *delta.Graph {
	g := delta.NewGraph(delta.Undirected)
	g.Grow(n)
	for _, e := range gen.BarabasiAlbert(n, m, seed) {
		g.Link(e.U, e.V)
	}
	return g
}

// edgesOf lists g's edges u < v in increasing order.
func edgesOf(g *delta.Graph) [][2]uint32 {
	var all [][2]uint32
	g.ForEachEdge(func(u, v uint32, _ uint32) { all = append(all, [2]uint32{u, v}) })
	return all
}

// derived returns every node's vector as c derives it.
func derived(c *Counter, g *delta.Graph) *delta.Vectors {
	vec := delta.NewVectors(g.NumNodes(), c.NumOrbits())
	var buf []uint64
	for x := range uint32(g.NumNodes()) {
		var err error
		if buf, err = c.Vector(x, buf); err != nil {
			panic(err)
		}
		copy(vec.Row(x), buf)
	}
	return vec
}

// checkRecount demands that every derived count equals the static
// recount of delta/undirected.
func checkRecount(t *testing.T, what string, c *Counter, g *delta.Graph) *delta.Vectors {
	t.Helper()
	got := derived(c, g)
	want := undirected.NewRecounter(c.MaxNodes()).Recount(g)
	if x, o, a, b, ok := got.FirstDiff(want); !ok {
		t.Fatalf("%s: node %d orbit %d: factored %d, recount %d", what, x, o, a, b)
	}
	return got
}

// checkAll demands that every derived count equals both the static recount
// and the brute-force enumeration of delta/brute.
func checkAll(t *testing.T, what string, c *Counter, g *delta.Graph) {
	t.Helper()
	if err := invariants(c, g); err != nil {
		t.Fatalf("%s: %v", what, err)
	}
	got := checkRecount(t, what, c, g)
	cat, err := catalog.New(delta.Undirected, c.MaxNodes())
	if err != nil {
		t.Fatal(err)
	}
	want := brute.Count(g, cat)
	if x, o, a, b, ok := got.FirstDiff(want); !ok {
		t.Fatalf("%s: node %d orbit %d: factored %d, brute %d", what, x, o, a, b)
	}
}
