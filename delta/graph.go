package delta

import (
	"github.com/RoaringBitmap/roaring/v2"
)

// Graph is the simple graph projected from a multigraph of edge events.
//
// Nodes are dense uint32 ids 0..NumNodes()-1. For Undirected graphs Out(u)
// holds the neighbours of u and In is unused. For Directed graphs Out(u)
// holds the successors (u→w) and In(u) the predecessors (w→u); Neighbors(u)
// is their union, computed on demand.
//
// Multiplicities of 1 are stored only as the bitmap bit; multiplicities
// above 1 are kept in a side map, so a simple graph costs no map entry.
type Graph struct {
	kind  Kind
	out   []*roaring.Bitmap
	in    []*roaring.Bitmap
	extra map[uint64]uint32 // multiplicity − 1, only where > 0
	edges int               // simple edges (undirected) or arcs (directed)
}

// NewGraph returns an empty graph of the given kind.
func NewGraph(kind Kind) *Graph {
	return &Graph{kind: kind, extra: make(map[uint64]uint32)}
}

// Kind returns the graph's kind.
func (g *Graph) Kind() Kind { return g.kind }

// NumNodes returns the number of node ids in use.
func (g *Graph) NumNodes() int { return len(g.out) }

// NumEdges returns the number of simple edges (Undirected) or arcs (Directed).
func (g *Graph) NumEdges() int { return g.edges }

// Grow makes node ids 0..n-1 exist. It never shrinks the graph.
func (g *Graph) Grow(n int) {
	for len(g.out) < n {
		g.out = append(g.out, roaring.New())
		if g.kind == Directed {
			g.in = append(g.in, roaring.New())
		}
	}
}

func (g *Graph) key(u, v uint32) uint64 {
	if g.kind == Undirected && u > v {
		u, v = v, u
	}
	return uint64(u)<<32 | uint64(v)
}

// HasEdge reports whether the simple graph has the edge {u,v} (Undirected)
// or the arc u→v (Directed).
func (g *Graph) HasEdge(u, v uint32) bool {
	if int(u) >= len(g.out) || int(v) >= len(g.out) {
		return false
	}
	return g.out[u].Contains(v)
}

// Multiplicity returns the multiplicity of {u,v} or u→v.
func (g *Graph) Multiplicity(u, v uint32) uint32 {
	if !g.HasEdge(u, v) {
		return 0
	}
	return 1 + g.extra[g.key(u, v)]
}

// Increment adds one to the multiplicity of {u,v} (or u→v), growing the
// graph to hold both nodes. It reports whether the simple graph changed
// (multiplicity 0→1). A self-loop is rejected with ErrSelfLoop and changes
// nothing.
func (g *Graph) Increment(u, v uint32) (changed bool, err error) {
	if u == v {
		return false, ErrSelfLoop
	}
	g.Grow(int(max(u, v)) + 1)
	if !g.out[u].Contains(v) {
		g.link(u, v)
		return true, nil
	}
	k := g.key(u, v)
	if g.extra[k] == ^uint32(0)-1 {
		return false, ErrMultiplicity
	}
	g.extra[k]++
	return false, nil
}

// Decrement subtracts one from the multiplicity of {u,v} (or u→v). It
// reports whether the simple graph changed (multiplicity 1→0). A remove of
// an absent edge is rejected with ErrAbsent and changes nothing.
func (g *Graph) Decrement(u, v uint32) (changed bool, err error) {
	if u == v {
		return false, ErrSelfLoop
	}
	if !g.HasEdge(u, v) {
		return false, ErrAbsent
	}
	k := g.key(u, v)
	if m := g.extra[k]; m > 0 {
		if m == 1 {
			delete(g.extra, k)
		} else {
			g.extra[k] = m - 1
		}
		return false, nil
	}
	g.unlink(u, v)
	return true, nil
}

// Link adds {u,v} (or u→v) to the simple graph with multiplicity 1. The
// edge must be absent and u != v. Engines use Link and Unlink to look at
// G+uv or G−uv; they must restore the graph before returning.
func (g *Graph) Link(u, v uint32) {
	if u == v || g.HasEdge(u, v) {
		panic("delta: Link of a self-loop or present edge")
	}
	g.Grow(int(max(u, v)) + 1)
	g.link(u, v)
}

// Unlink removes {u,v} (or u→v) from the simple graph. The edge must be
// present with multiplicity 1.
func (g *Graph) Unlink(u, v uint32) {
	if !g.HasEdge(u, v) || g.extra[g.key(u, v)] != 0 {
		panic("delta: Unlink of an absent or multiple edge")
	}
	g.unlink(u, v)
}

func (g *Graph) link(u, v uint32) {
	g.out[u].Add(v)
	if g.kind == Undirected {
		g.out[v].Add(u)
	} else {
		g.in[v].Add(u)
	}
	g.edges++
}

func (g *Graph) unlink(u, v uint32) {
	g.out[u].Remove(v)
	if g.kind == Undirected {
		g.out[v].Remove(u)
	} else {
		g.in[v].Remove(u)
	}
	g.edges--
}

// Out returns the neighbours (Undirected) or successors (Directed) of u.
// The bitmap belongs to the graph: read it, never modify it.
func (g *Graph) Out(u uint32) *roaring.Bitmap { return g.out[u] }

// In returns the predecessors of u in a Directed graph, the neighbours in an
// Undirected one. The bitmap belongs to the graph.
func (g *Graph) In(u uint32) *roaring.Bitmap {
	if g.kind == Undirected {
		return g.out[u]
	}
	return g.in[u]
}

// Neighbors returns the nodes adjacent to u in either direction. For
// Undirected graphs it is Out(u) itself (do not modify it); for Directed
// graphs a new bitmap.
func (g *Graph) Neighbors(u uint32) *roaring.Bitmap {
	if g.kind == Undirected {
		return g.out[u]
	}
	return roaring.Or(g.out[u], g.in[u])
}

// Adjacent reports whether u and v are adjacent in either direction.
func (g *Graph) Adjacent(u, v uint32) bool {
	return g.HasEdge(u, v) || (g.kind == Directed && g.HasEdge(v, u))
}

// Degree returns the number of neighbours (Undirected) or of distinct
// nodes adjacent in either direction (Directed).
func (g *Graph) Degree(u uint32) int {
	if g.kind == Undirected {
		return int(g.out[u].GetCardinality())
	}
	return int(roaring.Or(g.out[u], g.in[u]).GetCardinality())
}

// ForEachEdge calls f for every simple edge (u<v, Undirected) or arc
// (Directed) with its multiplicity, in increasing (u, v) order.
func (g *Graph) ForEachEdge(f func(u, v uint32, mult uint32)) {
	for u := range g.out {
		it := g.out[u].Iterator()
		for it.HasNext() {
			v := it.Next()
			if g.kind == Undirected && v < uint32(u) {
				continue
			}
			f(uint32(u), v, 1+g.extra[g.key(uint32(u), v)])
		}
	}
}

// Clone returns a deep copy of g.
func (g *Graph) Clone() *Graph {
	c := &Graph{kind: g.kind, extra: make(map[uint64]uint32, len(g.extra)), edges: g.edges}
	c.out = make([]*roaring.Bitmap, len(g.out))
	for i, b := range g.out {
		c.out[i] = b.Clone()
	}
	if g.in != nil {
		c.in = make([]*roaring.Bitmap, len(g.in))
		for i, b := range g.in {
			c.in[i] = b.Clone()
		}
	}
	for k, m := range g.extra {
		c.extra[k] = m
	}
	return c
}

// Links returns how y is joined to x, seen from x: LinkOut|LinkIn for an
// undirected edge; LinkOut for x→y and LinkIn for y→x in a Directed graph;
// 0 when they are not adjacent.
func (g *Graph) Links(x, y uint32) Link {
	if int(x) >= len(g.out) || int(y) >= len(g.out) {
		return 0
	}
	if g.kind == Undirected {
		if g.out[x].Contains(y) {
			return LinkOut | LinkIn
		}
		return 0
	}
	var l Link
	if g.out[x].Contains(y) {
		l |= LinkOut
	}
	if g.in[x].Contains(y) {
		l |= LinkIn
	}
	return l
}
