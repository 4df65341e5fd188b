package signed

import (
	"fmt"

	"github.com/RoaringBitmap/roaring/v2"

	"orbitwatch/delta"
)

// DefaultHeavy is the degree from which a node is heavy (see Counter): it
// bounds the walk of an event at a light endpoint and makes heavy nodes
// few (at most 2|E|/θ). The same as delta/factored's, whose benchmarks
// chose it.
const DefaultHeavy = 512

// maxDegree bounds a node's degree so that every sum and product of a
// read (d·d, Σ d) stays far inside int64.
const maxDegree = 1 << 30

// node is one node's quantities: its record (signed degrees, triangles by
// sign pattern) and, in memory only, l[a][b] = Σ d_b(y) over its light
// neighbours y joined by a tie of sign a.
type node struct {
	d   [2]int64
	tri [3][2]int64
	l   [2][2]int64
}

// peer is a neighbour and the sign of the tie to it (0 positive, 1
// negative).
type peer struct {
	node uint32
	neg  uint8
}

// Counter keeps the signed 2–3 node orbit counts of a changing signed
// graph as per-node records and derives vectors on read (package doc). It
// reads the adjacency of the delta.Graph its events come with and keeps
// no copy of it.
type Counter struct {
	theta  int64
	nodes  []node
	heavy  []bool
	heavyN [][]peer // heavy neighbours of each node, unordered
	dirty  delta.Bits
	fault  error
	// Event scratch: a walked node's neighbours with their signs, and the
	// common neighbours of the changed pair with the signs of their ties
	// to u (high bit) and v.
	it       roaring.ManyIntIterator
	all, neg []uint32
	nbrs     []peer
	common   []peer
}

// New returns an empty Counter with the heavy threshold DefaultHeavy.
func New() *Counter { return NewThreshold(DefaultHeavy) }

// NewThreshold returns an empty Counter whose nodes are heavy from degree
// theta ≥ 1. Records are written for one threshold: a store written with
// one must be read with the same. Tests use small thresholds so that
// nodes turn heavy and light all the time.
func NewThreshold(theta int) *Counter {
	if theta < 1 {
		panic("signed: heavy threshold must be at least 1")
	}
	return &Counter{theta: int64(theta)}
}

// Kind returns delta.Signed.
func (c *Counter) Kind() delta.Kind { return delta.Signed }

// MaxNodes returns 3.
func (c *Counter) MaxNodes() int { return 3 }

// NumOrbits returns 15.
func (c *Counter) NumOrbits() int { return numOrbits }

// Threshold returns the heavy threshold θ.
func (c *Counter) Threshold() int { return int(c.theta) }

func (c *Counter) grow(n int) {
	if len(c.nodes) >= n {
		return
	}
	c.nodes = append(c.nodes, make([]node, n-len(c.nodes))...)
	c.heavy = append(c.heavy, make([]bool, n-len(c.heavy))...)
	c.heavyN = append(c.heavyN, make([][]peer, n-len(c.heavyN))...)
	c.dirty.Grow(n)
}

func (c *Counter) touch(x uint32) { c.dirty.Set(x) }

func (n *node) degree() int64 { return n.d[0] + n.d[1] }

func sign(neg bool) uint8 {
	if neg {
		return 1
	}
	return 0
}

// Insert updates the records for adding uv, of the sign neg, to g, which
// lacks it.
func (c *Counter) Insert(g *delta.Graph, u, v uint32, neg bool) error {
	if g.Kind() != delta.Signed || u == v || g.HasEdge(u, v) {
		panic("signed: Insert on an unsigned graph, of a self-loop or of a present edge")
	}
	c.grow(g.NumNodes())
	c.fault = nil
	s := sign(neg)
	c.update(g, u, v, s, +1)
	if c.crosses(u) || c.crosses(v) {
		// Threshold crossings walk the neighbours in G, with uv.
		g.SetMultiplicities(u, v, uint32(1-s), uint32(s))
		c.flip(g, u, c.nodes[u].degree())
		c.flip(g, v, c.nodes[v].degree())
		g.SetMultiplicities(u, v, 0, 0)
	}
	if c.nodes[u].degree() > maxDegree || c.nodes[v].degree() > maxDegree {
		c.failf("degree of node %d or %d above 2^30", u, v)
	}
	return c.fault
}

// Delete updates the records for removing uv from g, which has it.
func (c *Counter) Delete(g *delta.Graph, u, v uint32) error {
	if g.Kind() != delta.Signed || !g.HasEdge(u, v) {
		panic("signed: Delete on an unsigned graph or of an absent edge")
	}
	c.grow(g.NumNodes())
	c.fault = nil
	p, n := g.Multiplicities(u, v)
	s := sign(n > 0)
	// The nodes take the side their degree in G − uv gives them while
	// the graph still has uv, so the walks see every neighbour.
	c.flip(g, u, c.nodes[u].degree()-1)
	c.flip(g, v, c.nodes[v].degree()-1)
	g.SetMultiplicities(u, v, 0, 0)
	c.update(g, u, v, s, -1)
	g.SetMultiplicities(u, v, p, n)
	return c.fault
}

// update applies adding (dir = +1) or removing (−1) the tie uv of sign s
// to the records, g being G⁻, the graph without uv, and every node's side
// (heavy or light) the one it has in G⁻. With W = N(u) ∩ N(v) and σ(x,y)
// the sign of a tie:
//
//	d_s(u), d_s(v) ±1
//	tri_u[s+σ(u,r)][σ(v,r)], tri_v[s+σ(v,r)][σ(u,r)], tri_r[σ(u,r)+σ(v,r)][s] ±1 for r ∈ W
//	l_z[σ(u,z)][s] ±1 for z ∈ N(u) when u is light, the same for v
//	l_v[s][b] ±(d_b(u) + [b = s]) when u is light (u's degrees in G), the same for v
//
// and a heavy endpoint joins or leaves the other's heavy list.
func (c *Counter) update(g *delta.Graph, u, v uint32, s uint8, dir int64) {
	if dir < 0 {
		// The degrees are G⁻'s while the changes are made.
		c.add(u, &c.nodes[u].d[s], -1)
		c.add(v, &c.nodes[v].d[s], -1)
	}
	c.collectCommon(g, u, v)
	for _, r := range c.common {
		su, sv := r.neg>>1, r.neg&1
		c.add(u, &c.nodes[u].tri[s+su][sv], dir)
		c.add(v, &c.nodes[v].tri[s+sv][su], dir)
		c.add(r.node, &c.nodes[r.node].tri[su+sv][s], dir)
		c.touch(r.node)
	}
	c.endpoint(g, u, v, s, dir)
	c.endpoint(g, v, u, s, dir)
	if dir > 0 {
		c.add(u, &c.nodes[u].d[s], 1)
		c.add(v, &c.nodes[v].d[s], 1)
	}
	for _, x := range [2]uint32{u, v} {
		c.touch(x)
		// A heavy neighbour's record holds the degrees of its neighbours.
		for _, h := range c.heavyN[x] {
			c.touch(h.node)
		}
	}
}

// endpoint applies x's side of the change: x's degree change reaches its
// neighbours' light sums when x is light, and x enters or leaves other's
// light sums or heavy list.
func (c *Counter) endpoint(g *delta.Graph, x, other uint32, s uint8, dir int64) {
	nx := &c.nodes[x]
	if c.heavy[x] {
		if dir > 0 {
			c.heavyN[other] = append(c.heavyN[other], peer{x, s})
		} else {
			c.heavyN[other] = removePeer(c.heavyN[other], x)
		}
		return
	}
	for _, z := range c.neighbours(g, x) {
		c.add(z.node, &c.nodes[z.node].l[z.neg][s], dir)
		if c.heavy[z.node] {
			c.touch(z.node)
		}
	}
	lo := &c.nodes[other].l[s]
	for b := range 2 {
		d := nx.d[b]
		if uint8(b) == s {
			d++
		}
		c.add(other, &lo[b], dir*d)
	}
}

// crosses reports whether x's side no longer matches its degree.
func (c *Counter) crosses(x uint32) bool { return (c.nodes[x].degree() >= c.theta) != c.heavy[x] }

// flip makes x heavy when d ≥ θ and light otherwise, if it is not
// already, walking its neighbours in g, which must hold every tie of x the
// records count: x's degrees leave or enter their light sums.
func (c *Counter) flip(g *delta.Graph, x uint32, d int64) {
	want := d >= c.theta
	if want == c.heavy[x] {
		return
	}
	dir := int64(-1) // x leaves its neighbours' light sums
	if !want {
		dir = 1
	}
	nx := &c.nodes[x]
	for _, z := range c.neighbours(g, x) {
		lz := &c.nodes[z.node].l[z.neg]
		c.add(z.node, &lz[0], dir*nx.d[0])
		c.add(z.node, &lz[1], dir*nx.d[1])
		if want {
			c.heavyN[z.node] = append(c.heavyN[z.node], peer{x, z.neg})
		} else {
			c.heavyN[z.node] = removePeer(c.heavyN[z.node], x)
		}
		c.touch(z.node)
	}
	c.heavy[x] = want
	c.touch(x)
}

func removePeer(list []peer, x uint32) []peer {
	for i, p := range list {
		if p.node == x {
			list[i] = list[len(list)-1]
			return list[:len(list)-1]
		}
	}
	panic(fmt.Sprintf("signed: node %d missing from a heavy neighbour list", x))
}

// add moves *p by d, recording a count that would go negative.
func (c *Counter) add(x uint32, p *int64, d int64) {
	*p += d
	if *p < 0 {
		c.failf("record of node %d went negative (%d)", x, *p)
	}
}

func (c *Counter) failf(format string, args ...any) {
	if c.fault == nil {
		c.fault = fmt.Errorf("signed: "+format, args...)
	}
}

// neighbours returns x's neighbours in g with the signs of their ties, in
// increasing id order, in a buffer the next call reuses.
func (c *Counter) neighbours(g *delta.Graph, x uint32) []peer {
	c.all = load(&c.it, c.all[:0], g.Out(x))
	c.neg = load(&c.it, c.neg[:0], g.Neg(x))
	c.nbrs = c.nbrs[:0]
	j := 0
	for _, y := range c.all {
		var n uint8
		if j < len(c.neg) && c.neg[j] == y {
			n = 1
			j++
		}
		c.nbrs = append(c.nbrs, peer{y, n})
	}
	return c.nbrs
}

// collectCommon sets c.common to N(u) ∩ N(v) in g, each with σ(u,r) in
// bit 1 and σ(v,r) in bit 0 of neg, walking the endpoint of smaller
// degree and testing membership in the other's bitmaps.
func (c *Counter) collectCommon(g *delta.Graph, u, v uint32) {
	c.common = c.common[:0]
	small, large := u, v
	if c.nodes[u].degree() > c.nodes[v].degree() {
		small, large = v, u
	}
	out, negs := g.Out(large), g.Neg(large)
	for _, y := range c.neighbours(g, small) {
		if !out.Contains(y.node) {
			continue
		}
		sl := uint8(0)
		if negs.Contains(y.node) {
			sl = 1
		}
		if small == u {
			c.common = append(c.common, peer{y.node, y.neg<<1 | sl})
		} else {
			c.common = append(c.common, peer{y.node, sl<<1 | y.neg})
		}
	}
}

// load appends the members of b to buf in increasing order; it allocates
// only when buf is too small.
func load(it *roaring.ManyIntIterator, buf []uint32, b *roaring.Bitmap) []uint32 {
	n := int(b.GetCardinality())
	if cap(buf) < n {
		buf = make([]uint32, 0, n+n/4)
	}
	buf = buf[:n]
	it.Initialize(b)
	it.NextMany(buf)
	return buf
}

// Changed calls visit, in increasing id order, for every node whose record
// may have changed since the last call, and forgets them.
func (c *Counter) Changed(visit func(x uint32)) {
	c.dirty.Drain(visit)
}

// gather returns x's local quantities from the in-memory records: O(H)
// for H heavy neighbours.
func (c *Counter) gather(x uint32) local {
	n := &c.nodes[x]
	q := local{d: n.d, tri: n.tri, s: n.l}
	for _, h := range c.heavyN[x] {
		dh := &c.nodes[h.node].d
		q.s[h.neg][0] += dh[0]
		q.s[h.neg][1] += dh[1]
	}
	return q
}

// Vector appends node x's 15 orbit counts to dst[:0]: its record and the
// degrees of its heavy neighbours, O(H). No allocation when dst has room.
func (c *Counter) Vector(x uint32, dst []uint64) ([]uint64, error) {
	if int(x) >= len(c.nodes) {
		return append(dst[:0], make([]uint64, numOrbits)...), nil
	}
	q := c.gather(x)
	return q.vector(x, dst)
}
