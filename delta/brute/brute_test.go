package brute

import (
	"math/rand/v2"
	"testing"

	"orbitwatch/delta"
	"orbitwatch/delta/catalog"
)

func graph(kind delta.Kind, edges ...[2]uint32) *delta.Graph {
	g := delta.NewGraph(kind)
	for _, e := range edges {
		if _, err := g.Increment(e[0], e[1]); err != nil {
			panic(err)
		}
	}
	return g
}

func mustCatalog(t testing.TB, kind delta.Kind, k int) *catalog.Catalog {
	c, err := catalog.New(kind, k)
	if err != nil {
		t.Fatal(err)
	}
	return c
}

// orbitNamed finds an orbit id by its catalog name, so the tests below
// state expectations in words rather than in ids.
func orbitNamed(t testing.TB, c *catalog.Catalog, name string) int {
	for _, o := range c.Orbits {
		if o.Name == name {
			return o.ID
		}
	}
	t.Fatalf("no orbit named %q", name)
	return -1
}

// expect checks whole vectors: the listed counts, and zero for every other
// orbit of every listed node.
func expect(t *testing.T, label string, c *catalog.Catalog, v *delta.Vectors, want map[uint32]map[string]uint64) {
	t.Helper()
	for x, counts := range want {
		named := map[int]uint64{}
		for name, n := range counts {
			named[orbitNamed(t, c, name)] = n
		}
		for o := 0; o < c.NumOrbits(); o++ {
			if got := v.Get(x, o); got != named[o] {
				t.Errorf("%s: node %d orbit %d (%s) = %d, want %d", label, x, o, c.Orbits[o].Name, got, named[o])
			}
		}
	}
}

// TestHandGraphs checks graphs whose counts follow from the definitions.
func TestHandGraphs(t *testing.T) {
	u4 := mustCatalog(t, delta.Undirected, 4)
	u5 := mustCatalog(t, delta.Undirected, 5)

	// 4-cycle 0-1-2-3-0. Each node has 2 edges. The induced 3-node
	// subgraphs are the 4 paths of 3 consecutive nodes (the two ends are
	// not adjacent); a node is the middle of the one centred on it and an
	// end of the two centred on its neighbours. The only 4-node set is the
	// cycle itself.
	c4 := graph(delta.Undirected, [2]uint32{0, 1}, [2]uint32{1, 2}, [2]uint32{2, 3}, [2]uint32{3, 0})
	want := map[string]uint64{"edge": 2, "end of 3-path": 2, "middle of 3-path": 1, "4-cycle": 1}
	expect(t, "4-cycle", u4, Count(c4, u4), map[uint32]map[string]uint64{0: want, 1: want, 2: want, 3: want})

	// 3-star centre 0, leaves 1..3. The centre: 3 edges, middle of C(3,2)
	// = 3 induced 3-paths, centre of the one star. A leaf: 1 edge, end of
	// the 2 paths through the other leaves, a leaf of the star.
	star := graph(delta.Undirected, [2]uint32{0, 1}, [2]uint32{0, 2}, [2]uint32{0, 3})
	leaf := map[string]uint64{"edge": 1, "end of 3-path": 2, "leaf of 3-star": 1}
	expect(t, "3-star", u4, Count(star, u4), map[uint32]map[string]uint64{
		0: {"edge": 3, "middle of 3-path": 3, "centre of 3-star": 1}, 1: leaf, 2: leaf, 3: leaf,
	})

	// K5: every node has 4 edges, is in C(4,2) = 6 triangles, C(4,3) = 4
	// K4s and the one K5; every subset is complete, so nothing else.
	var k5 [][2]uint32
	for a := uint32(0); a < 5; a++ {
		for b := a + 1; b < 5; b++ {
			k5 = append(k5, [2]uint32{a, b})
		}
	}
	full := map[string]uint64{"edge": 4, "triangle": 6, "K4": 4, "K5": 1}
	expect(t, "K5", u5, Count(graph(delta.Undirected, k5...), u5), map[uint32]map[string]uint64{0: full, 2: full, 4: full})

	// 5-path a-b-c-d-e (0..4): every connected induced subgraph is a
	// subpath. a is an end of ab, abc, abcd, abcde. b ends bc, bcd, bcde,
	// is the middle of abc and of abcd, and next-to-end in abcde. c ends
	// bc, cd, abc, cde, is the middle of bcd, abcd, bcde and of abcde.
	p5 := graph(delta.Undirected, [2]uint32{0, 1}, [2]uint32{1, 2}, [2]uint32{2, 3}, [2]uint32{3, 4})
	expect(t, "5-path", u5, Count(p5, u5), map[uint32]map[string]uint64{
		0: {"edge": 1, "end of 3-path": 1, "end of 4-path": 1, "end of 5-path": 1},
		1: {"edge": 2, "end of 3-path": 1, "middle of 3-path": 1, "end of 4-path": 1, "middle of 4-path": 1, "node 1 from an end of 5-path": 1},
		2: {"edge": 2, "end of 3-path": 2, "middle of 3-path": 1, "middle of 4-path": 2, "middle of 5-path": 1},
	})

	d3 := mustCatalog(t, delta.Directed, 3)
	// Directed 3-path 0→1→2: 0 pays on one arc, 1 is paid on one and pays
	// on one, 2 is paid on one; the triple is the path itself.
	dp := graph(delta.Directed, [2]uint32{0, 1}, [2]uint32{1, 2})
	expect(t, "directed 3-path", d3, Count(dp, d3), map[uint32]map[string]uint64{
		0: {"payer of a one-way arc": 1, "start of a directed 3-path": 1},
		1: {"payer of a one-way arc": 1, "payee of a one-way arc": 1, "middle of a directed 3-path": 1},
		2: {"payee of a one-way arc": 1, "end of a directed 3-path": 1},
	})
	// Reciprocal pair 0⇄1 with 2 paying 0: the pair, one one-way arc, and
	// the triple, a 3-path with one reciprocal pair.
	rp := graph(delta.Directed, [2]uint32{0, 1}, [2]uint32{1, 0}, [2]uint32{2, 0})
	v := Count(rp, d3)
	if v.Get(0, orbitNamed(t, d3, "both sides of a reciprocal pair")) != 1 || v.Get(1, orbitNamed(t, d3, "both sides of a reciprocal pair")) != 1 ||
		v.Get(2, orbitNamed(t, d3, "payer of a one-way arc")) != 1 || v.Get(0, orbitNamed(t, d3, "payee of a one-way arc")) != 1 {
		t.Errorf("reciprocal pair with a payer: 2-node orbits wrong: %v %v %v", v.Row(0), v.Row(1), v.Row(2))
	}
	g3 := GraphletCounts(rp, d3)
	var triples uint64
	for id, n := range g3 {
		if d3.Graphlets[id].Nodes == 3 {
			triples += n
		}
	}
	if triples != 1 {
		t.Errorf("reciprocal pair with a payer: %d 3-node graphlets, want 1", triples)
	}
}

// subsets enumerates every node set of size 2..k by plain combination and
// tests connectivity by search; it is the slow check of the extension walk.
func subsets(g *delta.Graph, c *catalog.Catalog) (*delta.Vectors, []uint64) {
	v := delta.NewVectors(g.NumNodes(), c.NumOrbits())
	counts := make([]uint64, len(c.Graphlets))
	n := uint32(g.NumNodes())
	var set []uint32
	var rec func(from uint32)
	rec = func(from uint32) {
		if len(set) >= 2 && connectedSet(g, set) {
			var code uint32
			for j := range set {
				for i := 0; i < j; i++ {
					if c.Kind == delta.Directed {
						if g.HasEdge(set[i], set[j]) {
							code |= 1 << catalog.ArcBit(i, j)
						}
						if g.HasEdge(set[j], set[i]) {
							code |= 1 << catalog.ArcBit(j, i)
						}
					} else if g.HasEdge(set[i], set[j]) {
						code |= 1 << catalog.PairBit(i, j)
					}
				}
			}
			gid, orbits := c.Lookup(len(set), code)
			counts[gid]++
			for i, x := range set {
				v.Set(x, int(orbits[i]), v.Get(x, int(orbits[i]))+1)
			}
		}
		if len(set) == c.MaxNodes {
			return
		}
		for x := from; x < n; x++ {
			set = append(set, x)
			rec(x + 1)
			set = set[:len(set)-1]
		}
	}
	rec(0)
	return v, counts
}

func connectedSet(g *delta.Graph, set []uint32) bool {
	seen := map[uint32]bool{set[0]: true}
	stack := []uint32{set[0]}
	for len(stack) > 0 {
		x := stack[len(stack)-1]
		stack = stack[:len(stack)-1]
		for _, y := range set {
			if !seen[y] && g.Adjacent(x, y) {
				seen[y] = true
				stack = append(stack, y)
			}
		}
	}
	return len(seen) == len(set)
}

func randomGraph(r *rand.Rand, kind delta.Kind, n, m int) *delta.Graph {
	g := delta.NewGraph(kind)
	g.Grow(n)
	for g.NumEdges() < m {
		u, v := uint32(r.IntN(n)), uint32(r.IntN(n))
		if u != v && !g.HasEdge(u, v) {
			g.Link(u, v)
		}
	}
	return g
}

// TestWalkMatchesSubsets holds the extension walk against plain subset
// enumeration on seeded random graphs.
func TestWalkMatchesSubsets(t *testing.T) {
	r := rand.New(rand.NewPCG(7, 11))
	cases := []struct {
		kind    delta.Kind
		k, n, m int
	}{
		{delta.Undirected, 3, 16, 40}, {delta.Undirected, 4, 16, 40}, {delta.Undirected, 5, 14, 30},
		{delta.Directed, 3, 14, 40}, {delta.Directed, 4, 12, 30},
	}
	for _, tc := range cases {
		c := mustCatalog(t, tc.kind, tc.k)
		for rep := 0; rep < 3; rep++ {
			g := randomGraph(r, tc.kind, tc.n, tc.m)
			want, wantCounts := subsets(g, c)
			got := Count(g, c)
			if x, o, a, b, ok := got.FirstDiff(want); !ok {
				t.Fatalf("%v k=%d: node %d orbit %d (%s): walk %d, subsets %d", tc.kind, tc.k, x, o, c.Orbits[o].Name, a, b)
			}
			gc := GraphletCounts(g, c)
			for id := range gc {
				if gc[id] != wantCounts[id] {
					t.Fatalf("%v k=%d graphlet %d: walk %d, subsets %d", tc.kind, tc.k, id, gc[id], wantCounts[id])
				}
			}
		}
	}
}

// TestOrbitSums checks Σ_x count(x,o) = |orbit o| · count(graphlet of o):
// every occurrence of a graphlet puts |orbit| nodes into each of its orbits.
func TestOrbitSums(t *testing.T) {
	r := rand.New(rand.NewPCG(3, 5))
	for _, tc := range []struct {
		kind    delta.Kind
		k, n, m int
	}{{delta.Undirected, 4, 60, 200}, {delta.Undirected, 5, 30, 70}, {delta.Directed, 4, 25, 60}} {
		c := mustCatalog(t, tc.kind, tc.k)
		g := randomGraph(r, tc.kind, tc.n, tc.m)
		v, gc := Count(g, c), GraphletCounts(g, c)
		for _, o := range c.Orbits {
			var s uint64
			for x := 0; x < g.NumNodes(); x++ {
				s += v.Get(uint32(x), o.ID)
			}
			if want := uint64(len(o.Positions)) * gc[o.Graphlet]; s != want {
				t.Fatalf("%v k=%d orbit %d: sum %d, want %d·%d", tc.kind, tc.k, o.ID, s, len(o.Positions), gc[o.Graphlet])
			}
		}
	}
}

func BenchmarkCountUndirected4(b *testing.B) {
	g := randomGraph(rand.New(rand.NewPCG(1, 2)), delta.Undirected, 60, 200)
	c := mustCatalog(b, delta.Undirected, 4)
	for i := 0; i < b.N; i++ {
		Count(g, c)
	}
}
