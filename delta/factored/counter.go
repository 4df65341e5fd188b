package factored

import (
	"fmt"

	"github.com/RoaringBitmap/roaring/v2"

	"orbitwatch/delta"
)

// node holds the maintained quantities of one node. All of them change
// only for u, v, their common neighbours or their neighbours when an edge
// uv comes or goes (see update).
type node struct {
	deg int64 // d(x)
	s1  int64 // Σ_{y∈N(x)} d(y)
	tri int64 // t(x), triangles at x
	k4  int64 // K4s at x
	cyc int64 // 4-cycles through x, as subgraphs (not necessarily induced)
	dd2 int64 // diamonds with x at a degree-2 node, as subgraphs
}

// Counter maintains the factored orbit counts of one undirected graph.
// Per-node quantities live in one flat slice indexed by dense id; the
// per-edge triangle counts of x live in edgeTri[x], aligned with N(x) in
// increasing id order, so a read walks them in step with the adjacency and
// an update finds an entry by Rank.
type Counter struct {
	maxNodes int
	orbits   int
	eq       *overlap
	nodes    []node
	edgeTri  [][]uint32
	// mark[x] = epoch<<2 | bits: bit 1 when x ∈ N(u)\{v}, bit 2 when
	// x ∈ N(v)\{u}, valid only for the current epoch.
	mark   []uint32
	epoch  uint32
	common []uint32
	outer  walker
	inner  walker
	reader walker
}

// walker iterates one neighbour set in chunks without allocating.
type walker struct {
	it    roaring.ManyIntIterator
	chunk [64]uint32
}

const (
	inU  = 1
	inV  = 2
	both = inU | inV
)

// New returns an empty Counter of orbits on 2..maxNodes nodes (3 gives
// orbits 0–3, 4 gives 0–14). Other sizes panic.
func New(maxNodes int) *Counter {
	c := &Counter{maxNodes: maxNodes, eq: equations()}
	switch maxNodes {
	case 3:
		c.orbits = 4
	case 4:
		c.orbits = maxOrbits
	default:
		panic(fmt.Sprintf("factored: maxNodes %d not supported (want 3 or 4)", maxNodes))
	}
	return c
}

// MaxNodes returns the largest graphlet size counted.
func (c *Counter) MaxNodes() int { return c.maxNodes }

// NumOrbits returns the length of a vector: 4 or 15.
func (c *Counter) NumOrbits() int { return c.orbits }

// grow makes room for node ids below n.
func (c *Counter) grow(n int) {
	for len(c.nodes) < n {
		c.nodes = append(c.nodes, node{})
		c.edgeTri = append(c.edgeTri, nil)
		c.mark = append(c.mark, 0)
	}
}

// Insert updates the counts for inserting uv. Same preconditions as
// delta.Engine.Insert: g is Undirected, lacks uv, u != v, both nodes exist;
// g is not modified. The caller must then link uv in g before the next
// call: the Counter's state describes the graph the events have built.
func (c *Counter) Insert(g *delta.Graph, u, v uint32) {
	if u == v || g.HasEdge(u, v) {
		panic("factored: Insert of a self-loop or present edge")
	}
	c.update(g, u, v, 1)
}

// Delete updates the counts for deleting uv; g must have uv and is not
// modified; the caller must then unlink uv.
func (c *Counter) Delete(g *delta.Graph, u, v uint32) {
	if !g.HasEdge(u, v) {
		panic("factored: Delete of an absent edge")
	}
	c.update(g, u, v, -1)
}

// Load resets c to the counts of g by inserting its edges in order into a
// scratch copy that starts empty.
func (c *Counter) Load(g *delta.Graph) {
	if g.Kind() != delta.Undirected {
		panic("factored: graph kind is " + g.Kind().String())
	}
	*c = *New(c.maxNodes)
	h := delta.NewGraph(delta.Undirected)
	h.Grow(g.NumNodes())
	g.ForEachEdge(func(u, v uint32, _ uint32) {
		c.Insert(h, u, v)
		h.Link(u, v)
	})
	c.grow(g.NumNodes())
}

// nextEpoch starts a fresh set of marks, clearing them all when the
// 30-bit epoch wraps.
func (c *Counter) nextEpoch() {
	c.epoch++
	if c.epoch == 1<<30 {
		clear(c.mark)
		c.epoch = 1
	}
}

// bits returns x's marks of the current epoch.
func (c *Counter) bits(x uint32) uint32 {
	if m := c.mark[x]; m>>2 == c.epoch {
		return m & both
	}
	return 0
}

func (c *Counter) setBit(x, b uint32) {
	c.mark[x] = c.epoch<<2 | c.bits(x) | b
}
