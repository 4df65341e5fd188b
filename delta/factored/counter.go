package factored

import (
	"fmt"
	"slices"

	"orbitwatch/delta"
)

// DefaultHeavy is the degree from which a node is heavy (see Counter).
// It bounds the work of an event at a light endpoint (its neighbours'
// light-degree sums move) and the number of heavy nodes (at most 2|E|/θ),
// whose pair counts reads use. Measured in this package's benchmarks.
const DefaultHeavy = 512

// node holds the quantities of one node that its neighbours' reads need
// too; four holds those only its own read needs. Split so that a read's
// neighbour visits touch 24-byte records.
type node struct {
	deg int64 // d(x)
	tri int64 // t(x), triangles at x
	l1  int64 // Σ d(z) over the light neighbours z of x
}

// four holds x's K4s and the parts of its non-induced 4-cycles and
// diamonds (x at a degree-2 node) that are kept under updates: those whose
// pair of neighbours (4-cycles) or chord (diamonds) is not two heavy
// nodes. The rest comes from the pair counts of heavy nodes on read.
type four struct {
	k4  int64
	cyc int64
	dd2 int64
}

// heavy holds what only a heavy node keeps: the number of common
// neighbours with every other heavy node it shares one with, and the sums
// over its neighbours y that a read would otherwise walk d(x) records for:
//
//	al = Σ l1(y)                b  = Σ C(d(y)−1, 2)    ct = Σ t(y)
//	dd = Σ tri(x,y)·(d(y)−2)    e  = Σ C(tri(x,y), 2)
type heavy struct {
	row               map[uint32]uint32
	al, b, ct, dd, ee int64
}

// Counter keeps the undirected 2–3 or 2–4 node orbit counts of a changing
// graph as per-node records and derives vectors on read (package doc).
//
// A node is heavy while its degree is at least the threshold θ. Sums over
// neighbours are kept in a form no hub update has to push to all of its
// neighbours: every node keeps l1, the degree sum of its light neighbours
// (a light node's degree change moves at most θ of them), and the list of
// its heavy neighbours, whose degrees are added on read; heavy nodes keep
// the pair counts and neighbour sums of type heavy. Neighbour walks go
// from the light side and test membership on the heavy one.
type Counter struct {
	maxNodes int
	orbits   int
	theta    int64
	eq       *overlap

	nodes  []node
	four   []four
	adj    []adjacency
	heavyN [][]uint32 // heavy neighbours of each node, unordered
	hv     []*heavy   // non-nil exactly for the nodes assigned heavy

	// dirty marks the nodes whose record may have changed since Changed.
	dirty delta.Bits
	// marks[0], marks[1] hold N(u), N(v) of the event in progress when
	// that endpoint is light; inW marks the common neighbours. All zero
	// between events.
	marks  [2]delta.Bits
	inW    delta.Bits
	common []uint32
	fault  error
}

// New returns an empty Counter of orbits on 2..maxNodes nodes (3 gives
// orbits 0–3, 4 gives 0–14) with the heavy threshold DefaultHeavy. Other
// sizes panic.
func New(maxNodes int) *Counter { return NewThreshold(maxNodes, DefaultHeavy) }

// NewThreshold is New with the heavy threshold theta ≥ 1. Records are
// written for one threshold: a store written with one must be read with
// the same. Tests use small thresholds so that nodes turn heavy and light
// all the time.
func NewThreshold(maxNodes, theta int) *Counter {
	c := &Counter{maxNodes: maxNodes, theta: int64(theta), eq: equations()}
	switch maxNodes {
	case 3:
		c.orbits = 4
	case 4:
		c.orbits = maxOrbits
	default:
		panic(fmt.Sprintf("factored: maxNodes %d not supported (want 3 or 4)", maxNodes))
	}
	if theta < 1 {
		panic("factored: heavy threshold must be at least 1")
	}
	return c
}

// Kind returns delta.Undirected.
func (c *Counter) Kind() delta.Kind { return delta.Undirected }

// MaxNodes returns the largest graphlet size counted.
func (c *Counter) MaxNodes() int { return c.maxNodes }

// NumOrbits returns the length of a vector: 4 or 15.
func (c *Counter) NumOrbits() int { return c.orbits }

// Threshold returns the heavy threshold θ.
func (c *Counter) Threshold() int { return int(c.theta) }

// grow makes room for node ids below n.
func (c *Counter) grow(n int) {
	if len(c.nodes) >= n {
		return
	}
	c.nodes = append(c.nodes, make([]node, n-len(c.nodes))...)
	c.four = append(c.four, make([]four, n-len(c.four))...)
	c.adj = append(c.adj, make([]adjacency, n-len(c.adj))...)
	c.heavyN = append(c.heavyN, make([][]uint32, n-len(c.heavyN))...)
	c.hv = append(c.hv, make([]*heavy, n-len(c.hv))...)
	for _, b := range []*delta.Bits{&c.dirty, &c.marks[0], &c.marks[1], &c.inW} {
		b.Grow(n)
	}
}

func (c *Counter) isHeavy(x uint32) bool { return c.hv[x] != nil }

func (c *Counter) touch(x uint32) { c.dirty.Set(x) }

// Insert updates the records for adding uv to g, which lacks it (see
// delta.Counter). The Counter keeps its own adjacency, so it panics when
// it already has uv.
func (c *Counter) Insert(g *delta.Graph, u, v uint32, _ bool) error {
	c.grow(g.NumNodes())
	if u == v || int(max(u, v)) >= len(c.nodes) || c.adj[u].has(v) {
		panic("factored: Insert of a self-loop, present edge or unknown node")
	}
	c.change(u, v, +1)
	return c.fault
}

// Delete updates the records for removing uv from g, which has it. The
// Counter panics when its own adjacency lacks uv.
func (c *Counter) Delete(g *delta.Graph, u, v uint32) error {
	if u == v || int(max(u, v)) >= len(c.nodes) || !c.adj[u].has(v) {
		panic("factored: Delete of an absent edge")
	}
	c.change(u, v, -1)
	return c.fault
}

// Changed calls visit, in increasing id order, for every node whose record
// may have changed since the last call, and forgets them.
func (c *Counter) Changed(visit func(x uint32)) {
	c.dirty.Drain(visit)
}

// change applies inserting (s = +1) or deleting (s = −1) the edge uv. The
// local changes (update.go) are all computed in G⁻, the graph without uv,
// so that both directions share one derivation and differ only in sign;
// the heavy nodes' neighbour sums are taken out before and put back after
// for every node whose own quantities change (terms), and a node that
// crosses the threshold changes side after an insert and before a delete
// (flip), so that the assignment holds in G⁻ while the changes are made.
func (c *Counter) change(u, v uint32, s int64) {
	if s < 0 {
		c.flip(u, c.nodes[u].deg-1)
		c.flip(v, c.nodes[v].deg-1)
	}
	c.collectCommon(u, v)
	c.terms(u, v, -1)
	if s < 0 {
		c.unlink(u, v)
	}
	c.update(u, v, s)
	if s > 0 {
		c.link(u, v)
	}
	c.terms(u, v, +1)
	if s > 0 {
		c.flip(u, c.nodes[u].deg)
		c.flip(v, c.nodes[v].deg)
	}
	for _, r := range c.common {
		c.inW[r>>6] = 0
	}
}

// linked reports whether x and z are adjacent. A heavy node's list is
// never searched: x heavy is adjacent to z exactly when z's short list of
// heavy neighbours holds it. Two light nodes search the shorter list.
func (c *Counter) linked(x, z uint32) bool {
	switch {
	case c.isHeavy(x):
		return slices.Contains(c.heavyN[z], x)
	case c.isHeavy(z):
		return slices.Contains(c.heavyN[x], z)
	case c.adj[x].size() > c.adj[z].size():
		return c.adj[z].has(x)
	}
	return c.adj[x].has(z)
}

// collectCommon sets c.common to N(u) ∩ N(v) (the same in G and G⁻),
// walking the shorter list and testing membership in the longer.
func (c *Counter) collectCommon(u, v uint32) {
	c.common = c.common[:0]
	a, other := &c.adj[u], v
	if a.size() > c.adj[v].size() {
		a, other = &c.adj[v], u
	}
	for r := a.runs(); r.next(); {
		for _, y := range r.nbr {
			if c.linked(other, y) {
				c.common = append(c.common, y)
				c.inW[y>>6] |= 1 << (y & 63)
			}
		}
	}
}

// link adds uv to the adjacency, with tri(u,v) = |W|, moves the triangle
// counts of the edges to the common neighbours, the degrees, the heavy
// neighbour lists and the heavy pair counts from G⁻ to G. unlink undoes it.
func (c *Counter) link(u, v uint32) {
	c.structure(u, v, +1)
	c.adj[u].insert(v, uint32(len(c.common)))
	c.adj[v].insert(u, uint32(len(c.common)))
	c.pairs(u, v, +1)
}

func (c *Counter) unlink(u, v uint32) {
	c.pairs(u, v, -1)
	c.adj[u].remove(v)
	c.adj[v].remove(u)
	c.structure(u, v, -1)
}

// structure moves the degrees of u and v and the triangle counts of the
// edges u–r and v–r, r ∈ W, by s (in G⁻ for the heavy lists).
func (c *Counter) structure(u, v uint32, s int64) {
	d := uint32(s) // mod 2^32, so ^0 subtracts one
	for _, r := range c.common {
		*c.adj[u].find(r) += d
		*c.adj[r].find(u) += d
		*c.adj[v].find(r) += d
		*c.adj[r].find(v) += d
	}
	for _, x := range [2]uint32{u, v} {
		c.nodes[x].deg += s
		c.touch(x)
		// A heavy neighbour's record holds its degree sum.
		for _, h := range c.heavyN[x] {
			c.touch(h)
		}
	}
}

// pairs moves the heavy neighbour lists and the heavy pair counts for the
// edge uv, present in G: a heavy endpoint gains (s = +1) or loses the
// other endpoint's heavy neighbours as common neighbours, and the other
// endpoint's list gains or loses it. It runs with uv absent from the
// lists (before adding, after removing).
func (c *Counter) pairs(u, v uint32, s int64) {
	for _, e := range [2][2]uint32{{u, v}, {v, u}} {
		x, y := e[0], e[1]
		if !c.isHeavy(y) {
			continue
		}
		if s < 0 {
			c.heavyN[x] = removeID(c.heavyN[x], y)
		}
		if c.maxNodes == 4 {
			for _, q := range c.heavyN[x] {
				if q != y {
					c.bumpPair(y, q, s)
				}
			}
		}
		if s > 0 {
			c.heavyN[x] = append(c.heavyN[x], y)
		}
		c.touch(x)
	}
}

// bumpPair moves the common-neighbour count of the heavy nodes p and q by
// s, in both rows.
func (c *Counter) bumpPair(p, q uint32, s int64) {
	for _, e := range [2][2]uint32{{p, q}, {q, p}} {
		row := c.hv[e[0]].row
		n := int64(row[e[1]]) + s
		if n < 0 {
			c.failf("common neighbours of heavy nodes %d and %d would go negative", p, q)
			return
		}
		if n == 0 {
			delete(row, e[1])
		} else {
			row[e[1]] = uint32(n)
		}
		c.touch(e[0])
	}
}

func removeID(list []uint32, x uint32) []uint32 {
	for i, y := range list {
		if y == x {
			list[i] = list[len(list)-1]
			return list[:len(list)-1]
		}
	}
	panic(fmt.Sprintf("factored: node %d missing from a heavy neighbour list", x))
}

func (c *Counter) failf(format string, args ...any) {
	if c.fault == nil {
		c.fault = fmt.Errorf("factored: "+format, args...)
	}
}

// codeg returns the number of common neighbours of the heavy nodes p, q.
func (c *Counter) codeg(p, q uint32) int64 { return int64(c.hv[p].row[q]) }
