package factored

import (
	"fmt"
	"math/rand/v2"
	"slices"
	"testing"

	"github.com/RoaringBitmap/roaring/v2"

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
			t.Run(fmt.Sprintf("%s/k%d", s.name, k), func(t *testing.T) {
				rng := rand.New(rand.NewPCG(uint64(i), uint64(k)))
				g := delta.NewGraph(delta.Undirected)
				g.Grow(s.nodes)
				c := New(k)
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
		c := New(k)
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
		var buf []uint64
		for x := range uint32(n) {
			buf = c.Vector(g, x, buf)
			for o, v := range buf {
				if v != 0 {
					t.Fatalf("k%d: empty graph, node %d orbit %d = %d", k, x, o, v)
				}
			}
		}
		for i := range c.nodes {
			if c.nodes[i] != (node{}) || c.four[i] != (four{}) || len(c.adj[i].nbr) != 0 {
				t.Fatalf("k%d: empty graph, node %d keeps state %+v %+v, %d edge entries", k, i, c.nodes[i], c.four[i], len(c.adj[i].nbr))
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
		c := New(k)
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
	c := New(4)
	for range 800 {
		u, v := randomPair(rng, 50)
		apply(c, g, u, v)
	}
	l := New(4)
	l.Load(g)
	a, b := derived(c, g), derived(l, g)
	if x, o, p, q, ok := a.FirstDiff(b); !ok {
		t.Fatalf("node %d orbit %d: by events %d, loaded %d", x, o, p, q)
	}
	checkAll(t, "loaded", l, g)
}

// TestTouchedCoversChanges demands, for events of several kinds (hub
// edges, edges closing triangles and 4-cycles, deletions), that every node
// whose derived vector changed is named by Touched after the event and is
// in the event's Halo, that Touched names only Halo nodes, and that Halo
// holds no node beyond distance 2 (1 for 3 nodes) of the edge; then the
// same for Touched over batches of 15 events.
func TestTouchedCoversChanges(t *testing.T) {
	for _, k := range []int{3, 4} {
		rng := rand.New(rand.NewPCG(11, uint64(k)))
		const n = 80
		g := delta.NewGraph(delta.Undirected)
		g.Grow(n)
		c := New(k)
		for range 260 {
			u, v := randomPair(rng, n)
			if rng.IntN(3) == 0 {
				u = 0
			}
			if u != v && !g.HasEdge(u, v) {
				apply(c, g, u, v)
			}
		}
		c.Touched(func(uint32) {})
		before := derived(c, g)
		for ev := range 40 {
			u, v := randomPair(rng, n)
			if ev%4 == 0 {
				u = 0
				if v == 0 {
					v = 1
				}
			}
			halo := roaring.New()
			c.Halo(g, u, v, halo)
			apply(c, g, u, v)
			touched := roaring.New()
			c.Touched(func(x uint32) { touched.Add(x) })
			after := derived(c, g)
			changed := changedNodes(before, after)
			if changed.IsEmpty() {
				t.Fatalf("k%d event %d (%d,%d): no vector changed", k, ev, u, v)
			}
			if d := roaring.AndNot(changed, touched); !d.IsEmpty() {
				t.Fatalf("k%d event %d (%d,%d): nodes %v changed but Touched missed them", k, ev, u, v, d.ToArray())
			}
			if d := roaring.AndNot(touched, halo); !d.IsEmpty() {
				t.Fatalf("k%d event %d (%d,%d): Touched names %v outside the halo", k, ev, u, v, d.ToArray())
			}
			checkHaloDistance(t, g, u, v, k-2, halo)
			before = after
		}
		for batch := range 10 {
			for range 15 {
				u, v := randomPair(rng, n)
				apply(c, g, u, v)
			}
			touched := roaring.New()
			c.Touched(func(x uint32) { touched.Add(x) })
			after := derived(c, g)
			if d := roaring.AndNot(changedNodes(before, after), touched); !d.IsEmpty() {
				t.Fatalf("k%d batch %d: nodes %v changed but Touched missed them", k, batch, d.ToArray())
			}
			before = after
		}
		checkAll(t, fmt.Sprintf("k%d after touched events", k), c, g)
	}
}

// changedNodes returns the nodes whose rows differ.
func changedNodes(before, after *delta.Vectors) *roaring.Bitmap {
	out := roaring.New()
	for x := range uint32(after.NumNodes()) {
		if !rowsEqual(before.Row(x), after.Row(x)) {
			out.Add(x)
		}
	}
	return out
}

func rowsEqual(a, b []uint64) bool {
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

// checkHaloDistance demands that every node of halo is within distance
// reach of u or v, by breadth-first search from {u, v}.
func checkHaloDistance(t *testing.T, g *delta.Graph, u, v uint32, reach int, halo *roaring.Bitmap) {
	t.Helper()
	dist := map[uint32]int{u: 0, v: 0}
	front := []uint32{u, v}
	for step := 1; step <= reach; step++ {
		var next []uint32
		for _, x := range front {
			for _, y := range g.Out(x).ToArray() {
				if _, ok := dist[y]; !ok {
					dist[y] = step
					next = append(next, y)
				}
			}
		}
		front = next
	}
	halo.Iterate(func(x uint32) bool {
		if _, ok := dist[x]; !ok {
			t.Fatalf("Touched(%d,%d) holds node %d beyond distance %d", u, v, x, reach)
		}
		return true
	})
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
		c.Delete(g, e[0], e[1])
		g.Unlink(e[0], e[1])
		c.Insert(g, e[0], e[1])
		g.Link(e[0], e[1])
		buf = c.Vector(g, e[0], buf)
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
	c.Insert(g, 0, 1)
	g.Link(0, 1)
	for name, f := range map[string]func(){
		"insert present": func() { c.Insert(g, 1, 0) },
		"delete absent":  func() { c.Delete(g, 1, 2) },
		"self-loop":      func() { c.Insert(g, 2, 2) },
		"size":           func() { New(5) },
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
	c := New(4)
	c.Load(g)
	rng := rand.New(rand.NewPCG(8, 8))
	for range 3000 {
		u, v := randomPair(rng, n)
		apply(c, g, u, v)
	}
	for x := range uint32(n) {
		a := c.adj[x]
		want := g.Out(x).ToArray()
		if !slices.Equal(a.nbr, want) {
			t.Fatalf("node %d: adjacency %v, graph %v", x, a.nbr, want)
		}
		for i, y := range a.nbr {
			k := g.Out(x).AndCardinality(g.Out(y))
			if uint64(a.tri[i]) != k {
				t.Fatalf("edge %d-%d: kept %d triangles, intersection %d", x, y, a.tri[i], k)
			}
		}
	}
}
