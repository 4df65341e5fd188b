package factored

import (
	"fmt"
	"math/rand/v2"
	"slices"
	"testing"

	"orbitwatch/delta"
)

// TestOverlapMatchesHandDerivation holds the coefficients New enumerates
// from the catalog against the ones derived by hand, graphlet by graphlet,
// in the comment of solve in delta/undirected/recount.go (the relations of
// Hočevar & Demšar 2014, Bioinformatics 30(4)), and the 3-node ones
// recalled from memory: a triangle holds two 3-paths with a given node at
// an end and one with it in the middle.
func TestOverlapMatchesHandDerivation(t *testing.T) {
	want := map[int]map[int]int64{
		1:  {3: 2},
		2:  {3: 1},
		4:  {8: 2, 9: 2, 10: 1, 12: 4, 13: 2, 14: 6},
		5:  {8: 2, 10: 1, 11: 2, 12: 2, 13: 4, 14: 6},
		6:  {9: 1, 10: 1, 12: 2, 13: 1, 14: 3},
		7:  {11: 1, 13: 1, 14: 1},
		8:  {12: 1, 13: 1, 14: 3},
		9:  {12: 2, 14: 3},
		10: {12: 2, 13: 2, 14: 6},
		11: {13: 2, 14: 3},
		12: {14: 3},
		13: {14: 3},
	}
	a := equations()
	for p := range maxOrbits {
		for o := range maxOrbits {
			w := want[p][o]
			if p == o {
				w = 1
			}
			if a[p][o] != w {
				t.Errorf("overlap[%d][%d] = %d, want %d", p, o, a[p][o], w)
			}
		}
	}
}

// stream is one seeded event mix for TestStreams.
type stream struct {
	name   string
	nodes  int
	events int
	// insert is the chance that an event inserts a random absent pair;
	// otherwise it deletes a random present edge.
	insert float64
	// hub, when set, is the chance that an event's pair has node 0 in it.
	hub float64
	// start is the edge probability of the random graph the stream starts from.
	start float64
}

// TestStreams replays seeded random streams and, at every checkpoint,
// demands that every node's derived vector equals the static recount and
// the brute-force enumeration, for 3 and 4 nodes.
func TestStreams(t *testing.T) {
	events := 600
	if testing.Short() {
		events = 200
	}
	streams := []stream{
		{name: "insert-heavy", nodes: 40, events: events, insert: 0.8},
		{name: "delete-heavy", nodes: 30, events: events, insert: 0.25, start: 0.5},
		{name: "balanced-dense", nodes: 16, events: events, insert: 0.5, start: 0.6},
		{name: "hub", nodes: 60, events: events, insert: 0.6, hub: 0.6, start: 0.05},
	}
	for _, k := range []int{3, 4} {
		for i, s := range streams {
			for _, theta := range []int{1, 2, 4, DefaultHeavy} {
				t.Run(fmt.Sprintf("%s/k%d/heavy%d", s.name, k, theta), func(t *testing.T) {
					rng := rand.New(rand.NewPCG(uint64(i), uint64(k)))
					g := delta.NewGraph(delta.Undirected)
					g.Grow(s.nodes)
					c := NewThreshold(k, theta)
					for u := range uint32(s.nodes) {
						for v := u + 1; v < uint32(s.nodes); v++ {
							if rng.Float64() < s.start {
								apply(c, g, u, v)
							}
						}
					}
					checkAll(t, "start", c, g)
					for step := range s.events {
						u, v := pick(rng, g, s)
						apply(c, g, u, v)
						if step%40 == 39 {
							checkAll(t, fmt.Sprintf("after event %d", step), c, g)
						}
					}
					checkAll(t, "end", c, g)
				})
			}
		}
	}
}

// pick draws the pair of the next event of s.
func pick(rng *rand.Rand, g *delta.Graph, s stream) (uint32, uint32) {
	u, v := randomPair(rng, s.nodes)
	if rng.Float64() < s.hub {
		u = 0
		if v == 0 {
			v = 1 + uint32(rng.IntN(s.nodes-1))
		}
	}
	if rng.Float64() < s.insert || g.NumEdges() == 0 {
		for tries := 0; g.HasEdge(u, v) && tries < 20; tries++ {
			v = uint32(rng.IntN(s.nodes))
			if v == u {
				v = (u + 1) % uint32(s.nodes)
			}
		}
		return u, v
	}
	all := edgesOf(g)
	e := all[rng.IntN(len(all))]
	return e[0], e[1]
}

// TestDeleteAllThenRebuild deletes every edge of a dense random graph in a
// shuffled order, checks that every vector is all zero, and rebuilds it in
// another order, checking against brute force and the recount at the end
// of each phase and at checkpoints.
func TestDeleteAllThenRebuild(t *testing.T) {
	const n = 24
	for _, k := range []int{3, 4} {
		rng := rand.New(rand.NewPCG(99, uint64(k)))
		g := delta.NewGraph(delta.Undirected)
		g.Grow(n)
		c := NewThreshold(k, 5)
		for u := range uint32(n) {
			for v := u + 1; v < n; v++ {
				if rng.Float64() < 0.45 {
					apply(c, g, u, v)
				}
			}
		}
		all := edgesOf(g)
		rng.Shuffle(len(all), func(i, j int) { all[i], all[j] = all[j], all[i] })
		for i, e := range all {
			apply(c, g, e[0], e[1])
			if i%25 == 24 {
				checkAll(t, fmt.Sprintf("k%d deleting, %d left", k, g.NumEdges()), c, g)
			}
		}
		empty := derived(c, g)
		for x := range uint32(n) {
			for o, v := range empty.Row(x) {
				if v != 0 {
					t.Fatalf("k%d: empty graph, node %d orbit %d = %d", k, x, o, v)
				}
			}
		}
		for i := range c.nodes {
			if c.nodes[i] != (node{}) || c.four[i] != (four{}) || c.adj[i].size() != 0 || c.hv[i] != nil || len(c.heavyN[i]) != 0 {
				t.Fatalf("k%d: empty graph, node %d keeps state %+v %+v, %d edge entries", k, i, c.nodes[i], c.four[i], c.adj[i].size())
			}
		}
		rng.Shuffle(len(all), func(i, j int) { all[i], all[j] = all[j], all[i] })
		for i, e := range all {
			apply(c, g, e[1], e[0])
			if i%25 == 24 {
				checkAll(t, fmt.Sprintf("k%d rebuilding, %d edges", k, g.NumEdges()), c, g)
			}
		}
		checkAll(t, fmt.Sprintf("k%d rebuilt", k), c, g)
	}
}

// TestBarabasiAlbertChurn loads a 3,000-node BA graph (m = 4), deletes and
// re-inserts random edges and inserts random new ones, and compares all
// vectors with the recount at checkpoints and with brute force at the end.
func TestBarabasiAlbertChurn(t *testing.T) {
	const n = 3000
	g := baGraph(n, 4, 2026)
	rng := rand.New(rand.NewPCG(5, 5))
	for _, k := range []int{3, 4} {
		c := NewThreshold(k, 12)
		c.Load(g)
		checkRecount(t, fmt.Sprintf("k%d loaded", k), c, g)
		rounds := 4
		if testing.Short() {
			rounds = 2
		}
		for r := range rounds {
			all := edgesOf(g)
			for range 300 {
				e := all[rng.IntN(len(all))]
				if g.HasEdge(e[0], e[1]) {
					apply(c, g, e[0], e[1])
				}
				u, v := randomPair(rng, n)
				apply(c, g, u, v)
			}
			for _, e := range all[:200] {
				if !g.HasEdge(e[0], e[1]) {
					apply(c, g, e[0], e[1])
				}
			}
			checkRecount(t, fmt.Sprintf("k%d round %d", k, r), c, g)
		}
		checkAll(t, fmt.Sprintf("k%d end", k), c, g)
	}
}

// TestLoadEqualsEvents holds Load against the same graph built event by
// event with deletes in between.
func TestLoadEqualsEvents(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 1))
	g := delta.NewGraph(delta.Undirected)
	g.Grow(50)
	c := NewThreshold(4, 6)
	for range 800 {
		u, v := randomPair(rng, 50)
		apply(c, g, u, v)
	}
	l := NewThreshold(4, 6)
	l.Load(g)
	a, b := derived(c, g), derived(l, g)
	if x, o, p, q, ok := a.FirstDiff(b); !ok {
		t.Fatalf("node %d orbit %d: by events %d, loaded %d", x, o, p, q)
	}
	checkAll(t, "loaded", l, g)
}

// TestNoAllocation demands that a warmed Counter allocates nothing per
// event in steady state (delete, unlink, insert, link of existing edges)
// and that Vector allocates nothing into a large enough buffer.
func TestNoAllocation(t *testing.T) {
	g := baGraph(2000, 4, 7)
	c := New(4)
	c.Load(g)
	all := edgesOf(g)
	rng := rand.New(rand.NewPCG(1, 2))
	for _, e := range all {
		apply(c, g, e[0], e[1])
		apply(c, g, e[0], e[1])
	}
	buf := make([]uint64, 0, maxOrbits)
	i := 0
	allocs := testing.AllocsPerRun(2000, func() {
		e := all[rng.IntN(len(all))]
		_ = c.Delete(g, e[0], e[1])
		g.Unlink(e[0], e[1])
		_ = c.Insert(g, e[0], e[1], false)
		g.Link(e[0], e[1])
		buf, _ = c.Vector(e[0], buf)
		i++
	})
	if allocs != 0 {
		t.Fatalf("%v allocations per replayed event pair and read", allocs)
	}
	checkRecount(t, "after the allocation run", c, g)
}

// TestContractPanics checks that broken preconditions are refused with a
// package-prefixed panic.
func TestContractPanics(t *testing.T) {
	g := delta.NewGraph(delta.Undirected)
	g.Grow(3)
	c := New(4)
	_ = c.Insert(g, 0, 1, false)
	g.Link(0, 1)
	for name, f := range map[string]func(){
		"insert present": func() { _ = c.Insert(g, 1, 0, false) },
		"delete absent":  func() { _ = c.Delete(g, 1, 2) },
		"self-loop":      func() { _ = c.Insert(g, 2, 2, false) },
		"size":           func() { New(5) },
		"threshold":      func() { NewThreshold(4, 0) },
	} {
		func() {
			defer func() {
				r := recover()
				if s, ok := r.(string); !ok || len(s) < 10 || s[:10] != "factored: " {
					t.Errorf("%s: panic %v, want a factored: message", name, r)
				}
			}()
			f()
		}()
	}
}

// TestAdjacencyMatchesGraph checks the Counter's own adjacency and edge
// triangle counts after a churned BA stream: N(x) equals the graph's
// bitmap, and tri(x,y) equals the bitmap intersection |N(x) ∩ N(y)|
// (Roaring's AndCardinality, a code path of its own).
func TestAdjacencyMatchesGraph(t *testing.T) {
	const n = 1500
	g := baGraph(n, 5, 8)
	c := NewThreshold(4, 20)
	c.Load(g)
	rng := rand.New(rand.NewPCG(8, 8))
	for range 3000 {
		u, v := randomPair(rng, n)
		apply(c, g, u, v)
	}
	for x := range uint32(n) {
		var nbr, tri []uint32
		for it := c.adj[x].runs(); it.next(); {
			nbr, tri = append(nbr, it.nbr...), append(tri, it.tri...)
		}
		want := g.Out(x).ToArray()
		if !slices.Equal(nbr, want) {
			t.Fatalf("node %d: adjacency %v, graph %v", x, nbr, want)
		}
		for i, y := range nbr {
			k := g.Out(x).AndCardinality(g.Out(y))
			if uint64(tri[i]) != k {
				t.Fatalf("edge %d-%d: kept %d triangles, intersection %d", x, y, tri[i], k)
			}
		}
	}
}
