package factored

import (
	"fmt"
	"slices"

	"orbitwatch/delta"
)

// node holds the maintained quantities of one node that its neighbours'
// reads need too; four holds those only its own read needs. Split so that
// a read's neighbour visits touch 24-byte records. All of them change only
// for u, v, their common neighbours or their neighbours when an edge uv
// comes or goes (see update).
type node struct {
	deg int64 // d(x)
	s1  int64 // Σ_{y∈N(x)} d(y)
	tri int64 // t(x), triangles at x
}

type four struct {
	k4  int64 // K4s at x
	cyc int64 // 4-cycles through x, as subgraphs (not necessarily induced)
	dd2 int64 // diamonds with x at a degree-2 node, as subgraphs
}

// adjacency is one node's neighbours in increasing id order with the
// triangle count of each edge: tri[i] = tri(x, nbr[i]) = |N(x) ∩ N(nbr[i])|.
type adjacency struct {
	nbr []uint32
	tri []uint32
}

// Counter maintains the factored orbit counts of one undirected graph.
// Per-node quantities live in one flat slice indexed by dense id. The
// Counter keeps its own copy of the adjacency as sorted slices with the
// per-edge triangle counts aligned beside them: walking a slice costs one
// cache miss where a Roaring iterator costs several (their set-up was more
// than half the update time when this package walked delta.Graph's
// bitmaps), an edge's triangle count is found by binary search, and a
// read walks neighbours and their edge counts in step. It costs 8 bytes
// per edge end.
type Counter struct {
	maxNodes int
	orbits   int
	eq       *overlap
	nodes    []node
	four     []four
	adj      []adjacency
	// marks[0] and marks[1] are bitsets of N(u)\{v} and N(v)\{u} during
	// an update, all zero between updates: 2 bits a node (50 KB for 200k
	// nodes) stay in cache where a word a node did not.
	marks  [2][]uint64
	common []uint32
	// sources has a bit for every node whose own quantities or adjacency
	// changed since the last Touched: u, v, N(u), N(v) of every event.
	sources []uint64
	// halo is Touched's scratch bitset, all zero between calls.
	halo []uint64
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
		c.four = append(c.four, four{})
		c.adj = append(c.adj, adjacency{})
	}
	for _, b := range []*[]uint64{&c.marks[0], &c.marks[1], &c.sources, &c.halo} {
		for len(*b)*64 < n {
			*b = append(*b, 0)
		}
	}
}

// find returns the position of y in N(x) and whether it is there.
func (c *Counter) find(x, y uint32) (int, bool) {
	if int(x) >= len(c.adj) {
		return 0, false
	}
	return slices.BinarySearch(c.adj[x].nbr, y)
}

// maxDegree bounds the degrees a Counter accepts: with d ≤ 2^20 every
// pattern count (at most d·d_max², e.g. 4-path ends) fits in int64.
const maxDegree = 1 << 20

// Insert updates the counts for inserting uv. Same preconditions as
// delta.Engine.Insert: g is Undirected and lacks uv, u != v, both nodes
// exist in g. g is not modified and the caller links uv in it as usual;
// the Counter tracks the edge in its own adjacency, so it panics when it
// already has uv, and when a degree would pass 2^20.
func (c *Counter) Insert(g *delta.Graph, u, v uint32) {
	c.grow(g.NumNodes())
	if _, ok := c.find(u, v); ok || u == v || int(max(u, v)) >= len(c.nodes) {
		panic("factored: Insert of a self-loop, present edge or unknown node")
	}
	if max(c.nodes[u].deg, c.nodes[v].deg) >= maxDegree {
		panic("factored: degree would pass 2^20, counts could overflow int64")
	}
	c.update(u, v, 1)
}

// Delete updates the counts for deleting uv; g must have uv and is not
// modified. The Counter panics when its own adjacency lacks uv.
func (c *Counter) Delete(g *delta.Graph, u, v uint32) {
	if _, ok := c.find(u, v); !ok {
		panic("factored: Delete of an absent edge")
	}
	c.update(u, v, -1)
}

// Load resets c to the counts of g by inserting g's edges in order.
func (c *Counter) Load(g *delta.Graph) {
	if g.Kind() != delta.Undirected {
		panic("factored: graph kind is " + g.Kind().String())
	}
	*c = *New(c.maxNodes)
	c.grow(g.NumNodes())
	g.ForEachEdge(func(u, v uint32, _ uint32) { c.update(u, v, 1) })
}

// bits returns x's marks: inU when x ∈ N(u)\{v}, inV when x ∈ N(v)\{u}.
func (c *Counter) bits(x uint32) uint32 {
	w, b := x>>6, x&63
	return uint32(c.marks[0][w]>>b&1) | uint32(c.marks[1][w]>>b&1)<<1
}
