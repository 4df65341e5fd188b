package delta

import (
	"github.com/RoaringBitmap/roaring/v2"
)

// Graph is the simple graph projected from a multigraph of edge events.
//
// Nodes are dense uint32 ids 0..NumNodes()-1. For Undirected graphs Out(u)
// holds the neighbours of u and In is unused. For Directed graphs Out(u)
// holds the successors (u→w) and In(u) the predecessors (w→u); Neighbors(u)
// is their union, computed on demand. Signed graphs are Undirected graphs
// whose pairs also carry a sign: Out(u) holds every neighbour and Neg(u)
// those joined by a negative edge.
//
// Multiplicities of 1 are stored only as the bitmap bit; multiplicities
// above 1 are kept in a side map, so a simple graph costs no map entry. A
// signed pair keeps a positive multiplicity p and a negative one n: the
// side map holds the multiplicity of the pair's own sign minus one (n − 1
// for a negative pair, p − 1 for a positive one), and a negative pair with
// p > 0 keeps p in a second map, so a pair that only ever had one sign
// costs what an unsigned one does.
type Graph struct {
	kind  Kind
	out   []*roaring.Bitmap
	in    []*roaring.Bitmap
	neg   []*roaring.Bitmap // Signed: the negative neighbours, a subset of out
	extra map[uint64]uint32 // multiplicity − 1 of the pair's own sign, only where > 0
	pos   map[uint64]uint32 // Signed: p of a negative pair, only where > 0
	edges int               // simple edges (undirected, signed) or arcs (directed)
}

// NewGraph returns an empty graph of the given kind.
func NewGraph(kind Kind) *Graph {
	g := &Graph{kind: kind, extra: make(map[uint64]uint32)}
	if kind == Signed {
		g.pos = make(map[uint64]uint32)
	}
	return g
}

// Kind returns the graph's kind.
func (g *Graph) Kind() Kind { return g.kind }

// NumNodes returns the number of node ids in use.
func (g *Graph) NumNodes() int { return len(g.out) }

// NumEdges returns the number of simple edges (Undirected, Signed) or arcs
// (Directed).
func (g *Graph) NumEdges() int { return g.edges }

// Grow makes node ids 0..n-1 exist. It never shrinks the graph.
func (g *Graph) Grow(n int) {
	for len(g.out) < n {
		g.out = append(g.out, roaring.New())
		if g.kind == Directed {
			g.in = append(g.in, roaring.New())
		}
		if g.kind == Signed {
			g.neg = append(g.neg, roaring.New())
		}
	}
}

func (g *Graph) key(u, v uint32) uint64 {
	if g.kind != Directed && u > v {
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

// Multiplicity returns the multiplicity of {u,v} or u→v; for a Signed
// graph the sum p + n of both signs' (never above 2^32−1).
func (g *Graph) Multiplicity(u, v uint32) uint32 {
	p, n := g.Multiplicities(u, v)
	return p + n
}

// Multiplicities returns the positive and negative multiplicity of {u,v}
// in a Signed graph; for the other kinds the multiplicity and 0.
func (g *Graph) Multiplicities(u, v uint32) (pos, neg uint32) {
	if !g.HasEdge(u, v) {
		return 0, 0
	}
	k := g.key(u, v)
	own := 1 + g.extra[k]
	if g.kind == Signed && g.neg[u].Contains(v) {
		return g.pos[k], own
	}
	return own, 0
}

// Increment adds one to the multiplicity of {u,v} (or u→v), growing the
// graph to hold both nodes. It reports whether the simple graph changed
// (multiplicity 0→1). A self-loop is rejected with ErrSelfLoop and changes
// nothing. On a Signed graph it is IncrementSigned with a positive sign.
func (g *Graph) Increment(u, v uint32) (changed bool, err error) {
	if g.kind == Signed {
		return g.IncrementSigned(u, v, false)
	}
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
// an absent edge is rejected with ErrAbsent and changes nothing. On a
// Signed graph it is DecrementSigned with a positive sign.
func (g *Graph) Decrement(u, v uint32) (changed bool, err error) {
	if g.kind == Signed {
		return g.DecrementSigned(u, v, false)
	}
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
	if !g.HasEdge(u, v) || g.Multiplicity(u, v) != 1 {
		panic("delta: Unlink of an absent or multiple edge")
	}
	g.unlink(u, v)
}

func (g *Graph) link(u, v uint32) {
	g.out[u].Add(v)
	if g.kind != Directed {
		g.out[v].Add(u)
	} else {
		g.in[v].Add(u)
	}
	g.edges++
}

func (g *Graph) unlink(u, v uint32) {
	g.out[u].Remove(v)
	if g.kind != Directed {
		g.out[v].Remove(u)
	} else {
		g.in[v].Remove(u)
	}
	if g.kind == Signed {
		g.neg[u].Remove(v)
		g.neg[v].Remove(u)
	}
	g.edges--
}

// Out returns the neighbours (Undirected) or successors (Directed) of u.
// The bitmap belongs to the graph: read it, never modify it.
func (g *Graph) Out(u uint32) *roaring.Bitmap { return g.out[u] }

// In returns the predecessors of u in a Directed graph, the neighbours in an
// Undirected one. The bitmap belongs to the graph.
func (g *Graph) In(u uint32) *roaring.Bitmap {
	if g.kind != Directed {
		return g.out[u]
	}
	return g.in[u]
}

// Neighbors returns the nodes adjacent to u in either direction. For
// Undirected graphs it is Out(u) itself (do not modify it); for Directed
// graphs a new bitmap.
func (g *Graph) Neighbors(u uint32) *roaring.Bitmap {
	if g.kind != Directed {
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
	if g.kind != Directed {
		return int(g.out[u].GetCardinality())
	}
	return int(roaring.Or(g.out[u], g.in[u]).GetCardinality())
}

// ForEachEdge calls f for every simple edge (u<v, Undirected and Signed)
// or arc (Directed) with its multiplicity (Signed: p + n), in increasing
// (u, v) order.
func (g *Graph) ForEachEdge(f func(u, v uint32, mult uint32)) {
	for u := range g.out {
		it := g.out[u].Iterator()
		for it.HasNext() {
			v := it.Next()
			if g.kind != Directed && v < uint32(u) {
				continue
			}
			f(uint32(u), v, g.Multiplicity(uint32(u), v))
		}
	}
}

// Clone returns a deep copy of g.
func (g *Graph) Clone() *Graph {
	c := &Graph{kind: g.kind, extra: make(map[uint64]uint32, len(g.extra)), edges: g.edges}
	if g.kind == Signed {
		c.pos = make(map[uint64]uint32, len(g.pos))
		for k, p := range g.pos {
			c.pos[k] = p
		}
		c.neg = make([]*roaring.Bitmap, len(g.neg))
		for i, b := range g.neg {
			c.neg[i] = b.Clone()
		}
	}
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
// undirected edge, with LinkNeg added for a negative one in a Signed
// graph; LinkOut for x→y and LinkIn for y→x in a Directed graph; 0 when
// they are not adjacent.
func (g *Graph) Links(x, y uint32) Link {
	if int(x) >= len(g.out) || int(y) >= len(g.out) {
		return 0
	}
	if g.kind != Directed {
		if !g.out[x].Contains(y) {
			return 0
		}
		if g.kind == Signed && g.neg[x].Contains(y) {
			return LinkOut | LinkIn | LinkNeg
		}
		return LinkOut | LinkIn
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

// Neg returns the nodes joined to u by a negative edge in a Signed graph
// (a subset of Out(u)). The bitmap belongs to the graph. It panics for the
// other kinds.
func (g *Graph) Neg(u uint32) *roaring.Bitmap {
	if g.kind != Signed {
		panic("delta: Neg of a graph that is not Signed")
	}
	return g.neg[u]
}

// IncrementSigned adds one to the multiplicity of the sign neg of {u,v} in
// a Signed graph, growing the graph to hold both nodes. It reports whether
// the signed simple graph changed: the edge appeared, or a first negative
// unit turned a positive edge negative. A self-loop is rejected with
// ErrSelfLoop, a sum p + n that would pass 2^32−1 with ErrMultiplicity;
// both change nothing.
func (g *Graph) IncrementSigned(u, v uint32, neg bool) (changed bool, err error) {
	p, n, err := g.NextMultiplicities(u, v, neg, true)
	if err != nil {
		return false, err
	}
	return g.SetMultiplicities(u, v, p, n), nil
}

// DecrementSigned subtracts one from the multiplicity of the sign neg of
// {u,v} in a Signed graph. It reports whether the signed simple graph
// changed: the edge vanished, or its last negative unit went while
// positive ones stay (the edge turns positive). A remove of a sign whose
// multiplicity is zero is rejected with ErrAbsent, even while the other
// sign keeps the edge, and changes nothing.
func (g *Graph) DecrementSigned(u, v uint32, neg bool) (changed bool, err error) {
	p, n, err := g.NextMultiplicities(u, v, neg, false)
	if err != nil {
		return false, err
	}
	return g.SetMultiplicities(u, v, p, n), nil
}

// NextMultiplicities returns the multiplicities {u,v} of a Signed graph
// would have after adding (add) or removing one unit of the sign neg,
// without changing g, or the error IncrementSigned or DecrementSigned
// would reject the event with.
func (g *Graph) NextMultiplicities(u, v uint32, neg, add bool) (pos, negm uint32, err error) {
	if g.kind != Signed {
		panic("delta: a signed change of a graph that is not Signed")
	}
	if u == v {
		return 0, 0, ErrSelfLoop
	}
	p, n := g.Multiplicities(u, v)
	m := &p
	if neg {
		m = &n
	}
	switch {
	case add && p+n == ^uint32(0):
		return 0, 0, ErrMultiplicity
	case add:
		*m++
	case *m == 0:
		return 0, 0, ErrAbsent
	default:
		*m--
	}
	return p, n, nil
}

// SetMultiplicities sets the multiplicities of {u,v} (u→v) to pos and neg
// (neg must be 0 unless g is Signed; pos + neg at most 2^32−1), growing
// the graph to hold both nodes, and reports whether the simple graph or
// the pair's sign changed. Both zero removes the pair. u != v.
func (g *Graph) SetMultiplicities(u, v uint32, pos, neg uint32) (changed bool) {
	if u == v || (neg > 0 && g.kind != Signed) || uint64(pos)+uint64(neg) > uint64(^uint32(0)) {
		panic("delta: SetMultiplicities of a self-loop, of a sign on an unsigned graph, or above 2^32−1")
	}
	g.Grow(int(max(u, v)) + 1)
	k := g.key(u, v)
	before := g.Links(u, v)
	present := pos+neg > 0
	switch has := g.out[u].Contains(v); {
	case present && !has:
		g.link(u, v)
	case !present && has:
		g.unlink(u, v)
	}
	delete(g.extra, k)
	own := pos
	if g.kind == Signed {
		delete(g.pos, k)
		if neg > 0 {
			g.neg[u].Add(v)
			g.neg[v].Add(u)
			own = neg
			if pos > 0 {
				g.pos[k] = pos
			}
		} else {
			g.neg[u].Remove(v)
			g.neg[v].Remove(u)
		}
	}
	if own > 1 {
		g.extra[k] = own - 1
	}
	return g.Links(u, v) != before
}
