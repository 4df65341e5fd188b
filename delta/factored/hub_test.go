package factored

import (
	"fmt"
	"math/rand/v2"
	"testing"

	"orbitwatch/delta"
	"orbitwatch/delta/undirected"
)

// TestHubStar grows a star of 200,000 leaves around node 0, with a second
// hub (node 1) on every third leaf and random edges between leaves (so
// that the hubs close triangles, 4-cycles and diamonds through each other),
// then removes 60,000 of the star's edges and puts them back. At each
// checkpoint every derived vector must equal the static recount of
// delta/undirected.
func TestHubStar(t *testing.T) {
	leaves := 200_000
	if testing.Short() {
		leaves = 20_000
	}
	n := leaves + 2
	rng := rand.New(rand.NewPCG(200, 0))
	g := delta.NewGraph(delta.Undirected)
	g.Grow(n)
	c := New(4)
	for x := uint32(2); x < uint32(n); x++ {
		apply(c, g, 0, x)
		if x%3 == 0 {
			apply(c, g, 1, x)
		}
	}
	for range leaves / 50 {
		u, v := 2+uint32(rng.IntN(leaves)), 2+uint32(rng.IntN(leaves))
		if u != v && !g.HasEdge(u, v) {
			apply(c, g, u, v)
		}
	}
	apply(c, g, 0, 1)
	check := func(what string) {
		t.Helper()
		got := derived(c, g)
		want := undirected.NewRecounter(4).Recount(g)
		if x, o, a, b, ok := got.FirstDiff(want); !ok {
			t.Fatalf("%s: node %d orbit %d: derived %d, recount %d", what, x, o, a, b)
		}
		t.Logf("%s: %d edges, hub degrees %d and %d, hub 0 orbit 7 (3-star centre) %d", what, g.NumEdges(), c.nodes[0].deg, c.nodes[1].deg, got.Get(0, 7))
	}
	check("grown")
	removed := rng.Perm(leaves)[:leaves*3/10]
	for _, i := range removed {
		apply(c, g, 0, uint32(2+i))
	}
	check(fmt.Sprintf("%d star edges removed", len(removed)))
	for _, i := range removed {
		apply(c, g, 0, uint32(2+i))
	}
	check("star edges back")
}
