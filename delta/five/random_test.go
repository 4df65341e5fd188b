package five

import (
	"math/rand/v2"
	"testing"

	"orbitwatch/delta"
	"orbitwatch/delta/brute"
	"orbitwatch/delta/catalog"
)

// TestRandomGraphs holds the recount to delta/brute on 200 seeded random
// graphs of 5–16 nodes and densities 0.1–0.7, denser and larger than
// the 7-node census: hubs in several triangles, overlapping 4- and
// 5-cycles.
func TestRandomGraphs(t *testing.T) {
	cat, _ := catalog.New(delta.Undirected, 5)
	r := rand.New(rand.NewPCG(1, 2))
	for trial := 0; trial < 200; trial++ {
		n := 5 + r.IntN(12)
		p := 0.1 + 0.6*r.Float64()
		g := delta.NewGraph(delta.Undirected)
		g.Grow(n)
		for a := 0; a < n; a++ {
			for b := a + 1; b < n; b++ {
				if r.Float64() < p {
					g.Increment(uint32(a), uint32(b))
				}
			}
		}
		want := brute.Count(g, cat)
		got := NewRecounter(Options{}).Recount(g)
		if x, o, a, b, ok := got.FirstDiff(want); !ok {
			t.Fatalf("trial %d n=%d: node %d orbit %d (%s): got %d want %d", trial, n, x, o, cat.Orbits[o].Name, a, b)
		}
	}
}

// TestEmptyAndEdgeless: no nodes, and nodes without edges, give all-zero
// vectors of the right shape.
func TestEmptyAndEdgeless(t *testing.T) {
	for _, n := range []int{0, 1, 7} {
		g := delta.NewGraph(delta.Undirected)
		g.Grow(n)
		v, err := NewRecounter(Options{}).Count(g)
		if err != nil || v.NumNodes() != n || v.NumOrbits() != numOrbits {
			t.Fatalf("%d nodes: %v, %d nodes × %d orbits", n, err, v.NumNodes(), v.NumOrbits())
		}
		for x := range uint32(n) {
			for o, c := range v.Row(x) {
				if c != 0 {
					t.Fatalf("%d edgeless nodes: node %d orbit %d = %d", n, x, o, c)
				}
			}
		}
	}
}
