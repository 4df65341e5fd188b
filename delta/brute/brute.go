package brute

import (
	"orbitwatch/delta"
	"orbitwatch/delta/catalog"
)

// Count returns every node's orbit vector: count(x, o) is the number of
// node sets S ∋ x with 2 ≤ |S| ≤ c.MaxNodes whose induced subgraph g[S] is
// (weakly) connected and has x in orbit o. g and c must be of the same
// kind.
func Count(g *delta.Graph, c *catalog.Catalog) *delta.Vectors {
	v := delta.NewVectors(g.NumNodes(), c.NumOrbits())
	Walk(g, c, func(nodes []uint32, _ int, orbits *[5]int16) {
		for i, x := range nodes {
			v.Set(x, int(orbits[i]), v.Get(x, int(orbits[i]))+1)
		}
	})
	return v
}

// GraphletCounts returns, per graphlet id, the number of node sets whose
// induced subgraph is that graphlet.
func GraphletCounts(g *delta.Graph, c *catalog.Catalog) []uint64 {
	n := make([]uint64, len(c.Graphlets))
	Walk(g, c, func(_ []uint32, graphlet int, _ *[5]int16) { n[graphlet]++ })
	return n
}

// Walk calls visit once for every connected induced subgraph of 2..MaxNodes
// nodes, with its nodes as an ordered tuple, the graphlet id and the orbit
// of each tuple position. The slice and array are reused between calls.
//
// Sets are grown by the extension rule of Wernicke 2006 (ESU): a set is
// rooted at its least node v; a node joins only from the extension set,
// which holds neighbours of the newest member that are greater than v and
// neither in the set nor adjacent to an earlier member. Every connected set
// is so reached along exactly one path.
func Walk(g *delta.Graph, c *catalog.Catalog, visit func(nodes []uint32, graphlet int, orbits *[5]int16)) {
	if g.Kind() != c.Kind {
		panic("brute: graph and catalog kinds differ")
	}
	w := walker{g: g, c: c, visit: visit, adj: make([][]uint32, g.NumNodes())}
	for u := range w.adj {
		w.adj[u] = g.Neighbors(uint32(u)).ToArray()
	}
	for v := range w.adj {
		var ext []uint32
		for _, x := range w.adj[v] {
			if x > uint32(v) {
				ext = append(ext, x)
			}
		}
		w.nodes = append(w.nodes[:0], uint32(v))
		w.extend(0, ext, uint32(v))
	}
}

type walker struct {
	g     *delta.Graph
	c     *catalog.Catalog
	visit func([]uint32, int, *[5]int16)
	adj   [][]uint32
	nodes []uint32
}

// extend visits the current set (code is its adjacency code) and grows it
// by each extension node in turn.
func (w *walker) extend(code uint32, ext []uint32, root uint32) {
	k := len(w.nodes)
	if k >= 2 {
		gid, orbits := w.c.Lookup(k, code)
		if gid < 0 {
			panic("brute: extension reached a disconnected set")
		}
		w.visit(w.nodes, gid, orbits)
	}
	if k == w.c.MaxNodes {
		return
	}
	for len(ext) > 0 {
		x := ext[len(ext)-1]
		ext = ext[:len(ext)-1]
		next := append([]uint32(nil), ext...)
		for _, y := range w.adj[x] {
			if y > root && !w.inOrNextTo(y) && !contains(next, y) {
				next = append(next, y)
			}
		}
		w.nodes = append(w.nodes, x)
		w.extend(code|w.joinCode(k, x), next, root)
		w.nodes = w.nodes[:k]
	}
}

// inOrNextTo reports whether y is in the current set or adjacent to one of
// its members.
func (w *walker) inOrNextTo(y uint32) bool {
	for _, z := range w.nodes {
		if z == y || w.g.Adjacent(z, y) {
			return true
		}
	}
	return false
}

// joinCode returns the code bits between tuple position k (node x) and
// positions 0..k−1.
func (w *walker) joinCode(k int, x uint32) uint32 {
	var code uint32
	for i, z := range w.nodes[:k] {
		switch w.c.Kind {
		case delta.Directed:
			if w.g.HasEdge(z, x) {
				code |= 1 << catalog.ArcBit(i, k)
			}
			if w.g.HasEdge(x, z) {
				code |= 1 << catalog.ArcBit(k, i)
			}
		case delta.Signed:
			eb, nb := catalog.SignedBits(i, k)
			l := w.g.Links(z, x)
			if l != 0 {
				code |= 1 << eb
			}
			if l&delta.LinkNeg != 0 {
				code |= 1 << nb
			}
		default:
			if w.g.HasEdge(z, x) {
				code |= 1 << catalog.PairBit(i, k)
			}
		}
	}
	return code
}

func contains(xs []uint32, x uint32) bool {
	for _, y := range xs {
		if y == x {
			return true
		}
	}
	return false
}
