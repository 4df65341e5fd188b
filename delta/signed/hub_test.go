package signed

import (
	"math/rand/v2"
	"testing"

	"orbitwatch/delta"
)

// apply adds or removes one unit of a sign through delta.ApplySigned and
// fails the test on any error.
func apply(t testing.TB, c delta.Counter, g *delta.Graph, u, v uint32, neg, add bool) {
	t.Helper()
	if _, err := delta.ApplySigned(g, c, u, v, neg, add); err != nil {
		t.Fatalf("%d-%d negative %v add %v: %v", u, v, neg, add, err)
	}
}

// TestHubOfDisputes grows a merchant (node 0) with 30,000 customers, a
// tenth of them disputing, a second merchant (node 1) on every third
// customer, and random ties between customers; then flips 5,000 of the
// merchant's ties (a dispute opens on a paid tie, or the last dispute of a
// disputed tie closes) and removes 5,000. At each checkpoint every vector,
// in memory and derived from the records, must equal the static recount,
// and a restored counter must equal the live one.
func TestHubOfDisputes(t *testing.T) {
	leaves := 30_000
	if testing.Short() {
		leaves = 6_000
	}
	n := uint32(leaves + 2)
	r := rand.New(rand.NewPCG(12, 3))
	g := delta.NewGraph(delta.Signed)
	g.Grow(int(n))
	c := NewThreshold(64)
	for x := uint32(2); x < n; x++ {
		apply(t, c, g, 0, x, r.IntN(10) == 0, true)
		if x%3 == 0 {
			apply(t, c, g, 1, x, r.IntN(4) == 0, true)
		}
	}
	for range leaves / 4 {
		u, v := 2+uint32(r.IntN(leaves)), 2+uint32(r.IntN(leaves))
		if u != v {
			apply(t, c, g, u, v, r.IntN(5) == 0, true)
		}
	}
	apply(t, c, g, 0, 1, true, true)
	check := func(what string) {
		t.Helper()
		want := NewRecounter().Recount(g)
		src := delta.NewMemSource(g, c)
		restored := NewThreshold(64)
		if err := restored.Restore(g, src); err != nil {
			t.Fatalf("%s: Restore: %v", what, err)
		}
		var a, b, d []uint64
		for x := range n {
			var err error
			if a, err = c.Vector(x, a); err != nil {
				t.Fatalf("%s: node %d: %v", what, x, err)
			}
			if d, err = c.Derive(src, x, d); err != nil {
				t.Fatalf("%s: node %d: Derive: %v", what, x, err)
			}
			if b, err = restored.Vector(x, b); err != nil {
				t.Fatalf("%s: node %d: restored: %v", what, x, err)
			}
			for o, w := range want.Row(x) {
				if a[o] != w || d[o] != w || b[o] != w {
					t.Fatalf("%s: node %d orbit %d: in memory %d, derived %d, restored %d, recount %d", what, x, o, a[o], d[o], b[o], w)
				}
			}
		}
		t.Logf("%s: %d ties, merchant degrees %v and %v", what, g.NumEdges(), c.nodes[0].d, c.nodes[1].d)
	}
	check("grown")
	for range 5000 {
		x := 2 + uint32(r.IntN(leaves))
		if p, m := g.Multiplicities(0, x); m > 0 {
			apply(t, c, g, 0, x, true, false)
		} else if p > 0 {
			apply(t, c, g, 0, x, true, true)
		}
	}
	check("5,000 flips at the merchant")
	for range 5000 {
		x := 2 + uint32(r.IntN(leaves))
		if p, m := g.Multiplicities(0, x); p+m > 0 {
			apply(t, c, g, 0, x, m > 0, false)
		}
	}
	check("5,000 removes at the merchant")
}

// TestEventsAllocateNothing churns ties of a graph with hubs once to warm
// the buffers, then demands no allocation per event.
func TestEventsAllocateNothing(t *testing.T) {
	g, c, pairs := churnGraph(2000, 8, 4)
	i := 0
	step := func() {
		p := pairs[i%len(pairs)]
		i++
		neg := g.Links(p[0], p[1])&delta.LinkNeg != 0
		apply(t, c, g, p[0], p[1], neg, false)
		apply(t, c, g, p[0], p[1], !neg, true)
	}
	for range len(pairs) {
		step()
	}
	if a := testing.AllocsPerRun(500, step); a != 0 {
		t.Fatalf("%.2f allocations per event", a/2)
	}
}

// churnGraph builds a preferential-attachment signed graph (n nodes, m
// ties each, every tenth tie negative) and returns it with its counter
// (θ given) and its ties, shuffled.
func churnGraph(n, m, theta int) (*delta.Graph, *Counter, [][2]uint32) {
	r := rand.New(rand.NewPCG(uint64(n), uint64(m)))
	g := delta.NewGraph(delta.Signed)
	g.Grow(n)
	c := NewThreshold(theta)
	var ends []uint32
	var pairs [][2]uint32
	for x := uint32(1); x < uint32(n); x++ {
		for range min(m, int(x)) {
			y := uint32(r.IntN(int(x)))
			if len(ends) > 0 && r.IntN(2) == 0 {
				y = ends[r.IntN(len(ends))]
			}
			if y == x || g.HasEdge(x, y) {
				continue
			}
			if _, err := delta.ApplySigned(g, c, x, y, r.IntN(10) == 0, true); err != nil {
				panic(err)
			}
			ends = append(ends, x, y)
			pairs = append(pairs, [2]uint32{x, y})
		}
	}
	r.Shuffle(len(pairs), func(i, j int) { pairs[i], pairs[j] = pairs[j], pairs[i] })
	return g, c, pairs
}
