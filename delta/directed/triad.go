package directed

import (
	"encoding/binary"
	"fmt"
	"slices"
	"sync"

	"github.com/RoaringBitmap/roaring/v2"

	"orbitwatch/delta"
)

// numTriOrbits is the number of orbits of triangles (3 nodes, every pair
// joined): the 15 per-node triangle counts by type a record keeps.
const numTriOrbits = 15

// maxTriadDegree bounds a node's degree in the 2–3 Counter so that every
// product in a read (d_a·d_b, Σ d_b(y)) stays far inside int64.
const maxTriadDegree = 1 << 30

// triadRecord is one node's record in the 2–3 Counter: its out-only,
// in-only and reciprocal neighbour counts, and its triangles by the orbit
// it has in them. All of them change only at the endpoints of a changed
// arc and at their common neighbours.
type triadRecord struct {
	deg [3]int64
	tri [numTriOrbits]int64
}

// recordLen is the number of counts in a stored record: 3 degrees and 15
// triangle counts.
const recordLen = 3 + numTriOrbits

// Triads counts the directed 2–3 node orbits (33) in factored form: per
// node it keeps the typed degrees and the triangles by orbit (the
// per-node triad census of Ortmann & Brandes 2017, kept current), and
// derives the open orbits on read from those and the neighbours'
// degrees (equations.go). An arc event costs the walk of the smaller
// endpoint's neighbours with a membership test on the larger endpoint's
// bitmaps, plus one record write per triangle through the pair: a payment
// to a merchant with a million customers costs what a payment between
// two households costs, plus the triangles it really closes.
//
// It reads the adjacency of the delta.Graph its events come with (no copy
// of its own) and remembers that graph for Vector. Reads may run
// concurrently with each other, never with updates.
type Triads struct {
	eq *equations
	g  *delta.Graph
	// triIndex[a][b][c] is the record slot of the orbit of x in a triangle
	// with type(x,y) = a, type(y,z) = b, type(x,z) = c (indices t−1).
	triIndex [3][3][3]int8
	// triOrbit[i] is the orbit id of record slot i, and triDiag[i] its
	// pattern's diagonal A[o][o].
	triOrbit [numTriOrbits]int
	recs     []triadRecord
	changed  delta.Bits
	fault    error
	// Update scratch: the smaller endpoint's neighbours.
	it      roaring.ManyIntIterator
	out, in []uint32
	nbrs    []typed
	other   []typed
	common  []typed
	pool    sync.Pool // *readScratch
}

// typed is a neighbour and its pair type seen from the node walked.
type typed struct {
	node uint32
	t    uint8
}

// NewTriads returns an empty directed 2–3 node Counter.
func NewTriads() *Triads {
	c := &Triads{eq: equationsFor(3)}
	for i := range c.triIndex {
		for j := range c.triIndex[i] {
			for k := range c.triIndex[i][j] {
				c.triIndex[i][j][k] = -1
			}
		}
	}
	slot := 0
	for _, o := range c.eq.byFamily[fTriangle] {
		c.triOrbit[slot] = o
		slot++
	}
	if slot != numTriOrbits {
		panic(fmt.Sprintf("directed: %d triangle orbits, want %d", slot, numTriOrbits))
	}
	for a := uint8(1); a <= 3; a++ {
		for b := uint8(1); b <= 3; b++ {
			for cc := uint8(1); cc <= 3; cc++ {
				_, orbits := c.eq.cat.Lookup(3, typedCode(families[fTriangle].edges, []uint8{a, b, cc}))
				for i, o := range c.triOrbit {
					if o == int(orbits[0]) {
						c.triIndex[a-1][b-1][cc-1] = int8(i)
					}
				}
			}
		}
	}
	c.pool.New = func() any { return new(readScratch) }
	return c
}

// Kind returns delta.Directed.
func (c *Triads) Kind() delta.Kind { return delta.Directed }

// MaxNodes returns 3.
func (c *Triads) MaxNodes() int { return 3 }

// NumOrbits returns 33.
func (c *Triads) NumOrbits() int { return c.eq.cat.NumOrbits() }

func (c *Triads) grow(n int) {
	if len(c.recs) < n {
		if cap(c.recs) < n {
			c.recs = slices.Grow(c.recs, max(n, 2*cap(c.recs))-len(c.recs))
		}
		c.recs = c.recs[:n]
	}
	c.changed.Grow(n)
}

func (c *Triads) mark(x uint32) { c.changed.Set(x) }

// Insert updates the records for adding the arc u→v to g, which lacks it.
func (c *Triads) Insert(g *delta.Graph, u, v uint32, _ bool) error {
	return c.event(g, u, v, true)
}

// Delete updates the records for removing the arc u→v from g, which has it.
func (c *Triads) Delete(g *delta.Graph, u, v uint32) error {
	return c.event(g, u, v, false)
}

// event moves the pair (u, v) from its type now to the type with the arc
// u→v added or removed. The degrees of u and v move, and so does every
// triangle u, v, w: with τ the pair types (seen from the first node), u's
// orbit comes from (τ(u,v), τ(v,w), τ(u,w)), v's from (τ(v,u), τ(u,w),
// τ(v,w)) and w's from (τ(w,u), τ(u,v), τ(w,v)).
func (c *Triads) event(g *delta.Graph, u, v uint32, insert bool) error {
	if g.Kind() != delta.Directed || u == v {
		panic("directed: event on a self-loop or an undirected graph")
	}
	c.g = g
	c.grow(g.NumNodes())
	c.fault = nil
	common, old := c.commonNeighbours(g, u, v)
	now := old | tOut
	if !insert {
		now = old &^ tOut
	}
	if insert == (old&tOut != 0) {
		panic("directed: Insert of a present arc or Delete of an absent one")
	}
	ru, rv := &c.recs[u], &c.recs[v]
	if old != 0 {
		c.add(u, &ru.deg[old-1], -1)
		c.add(v, &rv.deg[rev(old)-1], -1)
	}
	if now != 0 {
		c.add(u, &ru.deg[now-1], 1)
		c.add(v, &rv.deg[rev(now)-1], 1)
		if degree(ru) > maxTriadDegree || degree(rv) > maxTriadDegree {
			c.fault = fmt.Errorf("directed: degree of node %d or %d above 2^30", u, v)
		}
	}
	c.mark(u)
	c.mark(v)
	for _, w := range common {
		tuw, tvw := w.t>>4, w.t&0xf
		if old != 0 {
			c.addTri(u, old, tvw, tuw, -1)
			c.addTri(v, rev(old), tuw, tvw, -1)
			c.addTri(w.node, rev(tuw), old, rev(tvw), -1)
		}
		if now != 0 {
			c.addTri(u, now, tvw, tuw, 1)
			c.addTri(v, rev(now), tuw, tvw, 1)
			c.addTri(w.node, rev(tuw), now, rev(tvw), 1)
		}
		c.mark(w.node)
	}
	return c.fault
}

// addTri moves the count of x's triangle orbit for (τ(x,y)=a, τ(y,z)=b,
// τ(x,z)=cc) by d.
func (c *Triads) addTri(x uint32, a, b, cc uint8, d int64) {
	i := c.triIndex[a-1][b-1][cc-1]
	c.add(x, &c.recs[x].tri[i], d)
}

// add moves *p by d and records a count that would go negative.
func (c *Triads) add(x uint32, p *int64, d int64) {
	*p += d
	if *p < 0 && c.fault == nil {
		c.fault = fmt.Errorf("directed: record of node %d went negative (%d)", x, *p)
	}
}

func degree(r *triadRecord) int64 { return r.deg[0] + r.deg[1] + r.deg[2] }

// mergeRatio: the common neighbours are found by merging both endpoints'
// sorted neighbour lists while the larger endpoint has at most this many
// times the smaller one's neighbours, else by membership tests of the
// smaller one's neighbours in the larger one's bitmaps.
const mergeRatio = 8

// commonNeighbours returns the type of (u, v) seen from u (0: not
// joined) and the nodes w ∉ {u, v} joined to both u and v, with τ(u,w) in
// the high and τ(v,w) in the low four bits of t. It walks the endpoint of
// smaller degree, so a hub endpoint costs a membership test per neighbour
// of the other one.
func (c *Triads) commonNeighbours(g *delta.Graph, u, v uint32) ([]typed, uint8) {
	small, large := u, v
	ds, dl := degree(&c.recs[u]), degree(&c.recs[v])
	if dl < ds {
		small, large, ds, dl = v, u, dl, ds
	}
	c.nbrs = c.loadNeighbours(g, small, c.nbrs[:0])
	var between uint8 // τ(small, large)
	c.common = c.common[:0]
	if dl <= mergeRatio*max(ds, 1) {
		c.other = c.loadNeighbours(g, large, c.other[:0])
		a, b := c.nbrs, c.other
		i, j := 0, 0
		for i < len(a) && j < len(b) {
			switch x, y := a[i], b[j]; {
			case x.node < y.node:
				if x.node == large {
					between = x.t
				}
				i++
			case x.node > y.node:
				j++
			default:
				c.appendCommon(small == u, x.node, x.t, y.t)
				i++
				j++
			}
		}
		for ; i < len(a); i++ {
			if a[i].node == large {
				between = a[i].t
			}
		}
	} else {
		out, in := g.Out(large), g.In(large)
		for _, w := range c.nbrs {
			if w.node == large {
				between = w.t
				continue
			}
			var t uint8
			if out.Contains(w.node) {
				t |= tOut
			}
			if in.Contains(w.node) {
				t |= tIn
			}
			if t != 0 {
				c.appendCommon(small == u, w.node, w.t, t)
			}
		}
	}
	if small != u {
		between = rev(between)
	}
	return c.common, between
}

// appendCommon records a common neighbour w with τ(small,w) = ts and
// τ(large,w) = tl, packed with u's type high.
func (c *Triads) appendCommon(smallIsU bool, w uint32, ts, tl uint8) {
	if smallIsU {
		c.common = append(c.common, typed{w, ts<<4 | tl})
	} else {
		c.common = append(c.common, typed{w, tl<<4 | ts})
	}
}

// loadNeighbours appends x's neighbours with their types to dst, in
// increasing id order.
func (c *Triads) loadNeighbours(g *delta.Graph, x uint32, dst []typed) []typed {
	d := &c.recs[x].deg
	c.out = loadN(&c.it, c.out[:0], g.Out(x), int(d[tOut-1]+d[tBoth-1]))
	c.in = loadN(&c.it, c.in[:0], g.In(x), int(d[tIn-1]+d[tBoth-1]))
	return mergeTyped(c.out, c.in, dst)
}

// load appends the members of b to buf.
func load(it *roaring.ManyIntIterator, buf []uint32, b *roaring.Bitmap) []uint32 {
	return loadN(it, buf, b, int(b.GetCardinality()))
}

// loadN appends the n members of b to buf; the caller knows n from its
// records, which saves walking b's containers twice.
func loadN(it *roaring.ManyIntIterator, buf []uint32, b *roaring.Bitmap, n int) []uint32 {
	if cap(buf) < n {
		buf = make([]uint32, 0, n+n/4)
	}
	buf = buf[:n]
	it.Initialize(b)
	it.NextMany(buf)
	return buf
}

// mergeTyped merges ascending out- and in-neighbour lists into typed
// neighbours appended to dst.
func mergeTyped(out, in []uint32, dst []typed) []typed {
	i, j := 0, 0
	for i < len(out) || j < len(in) {
		switch {
		case j == len(in) || (i < len(out) && out[i] < in[j]):
			dst = append(dst, typed{out[i], tOut})
			i++
		case i == len(out) || in[j] < out[i]:
			dst = append(dst, typed{in[j], tIn})
			j++
		default:
			dst = append(dst, typed{out[i], tBoth})
			i, j = i+1, j+1
		}
	}
	return dst
}

// readScratch is one read's buffers, pooled so concurrent reads do not
// share them and a read allocates nothing once warm.
type readScratch struct {
	it      roaring.ManyIntIterator
	out, in []uint32
	nbrs    []typed
	adj     []delta.Adj
	n       []int64
}

// Vector appends node x's 33 orbit counts to dst[:0]. It reads x's record
// and walks x's neighbours in the graph the events built for their
// degrees: O(d(x)). The error is a record that does not solve (a bug).
func (c *Triads) Vector(x uint32, dst []uint64) ([]uint64, error) {
	dst = append(dst[:0], make([]uint64, c.NumOrbits())...)
	if int(x) >= len(c.recs) || c.g == nil {
		return dst, nil
	}
	s := c.pool.Get().(*readScratch)
	defer c.pool.Put(s)
	s.out = load(&s.it, s.out[:0], c.g.Out(x))
	s.in = load(&s.it, s.in[:0], c.g.In(x))
	s.nbrs = mergeTyped(s.out, s.in, s.nbrs[:0])
	var w [3][3]int64
	for _, y := range s.nbrs {
		dy := &c.recs[y.node].deg
		for b := range 3 {
			w[y.t-1][b] += dy[b]
		}
	}
	r := &c.recs[x]
	if err := c.solve(s, x, &r.deg, &r.tri, &w, dst); err != nil {
		return nil, err
	}
	return dst, nil
}

// solve fills dst with the orbit counts of a node with typed degrees d,
// triangle counts tri and neighbour degree sums w.
func (c *Triads) solve(s *readScratch, x uint32, d *[3]int64, tri *[numTriOrbits]int64, w *[3][3]int64, dst []uint64) error {
	s.n = append(s.n[:0], make([]int64, len(dst))...)
	c.eq.smallPatterns(s.n, d, w)
	for i, o := range c.triOrbit {
		s.n[o] = c.eq.diag[o] * tri[i]
	}
	if err := c.eq.solve(s.n, x); err != nil {
		return err
	}
	for i, v := range s.n {
		dst[i] = uint64(v)
	}
	return nil
}

// Changed calls visit for every node whose record changed since the last
// call (or Restore), in increasing id order, and forgets them.
func (c *Triads) Changed(visit func(x uint32)) {
	c.changed.Drain(visit)
}

// AppendRecord appends x's record: 18 uvarints (out-only, in-only and
// reciprocal degree, then the 15 triangle counts in orbit order), trailing
// zeros dropped.
func (c *Triads) AppendRecord(dst []byte, x uint32) []byte {
	if int(x) >= len(c.recs) {
		return dst
	}
	var counts [recordLen]uint64
	r := &c.recs[x]
	for i, v := range r.deg {
		counts[i] = uint64(v)
	}
	for i, v := range r.tri {
		counts[3+i] = uint64(v)
	}
	return delta.AppendCounts(dst, counts[:])
}

// decodeRecord decodes a stored record into r.
func decodeRecord(b []byte, r *triadRecord) error {
	var counts [recordLen]uint64
	if err := delta.DecodeCounts(b, counts[:]); err != nil {
		return err
	}
	for i, v := range counts {
		if v > maxCount {
			return fmt.Errorf("count %d is %d, above 2^62", i, v)
		}
	}
	for i := range r.deg {
		r.deg[i] = int64(counts[i])
	}
	for i := range r.tri {
		r.tri[i] = int64(counts[3+i])
	}
	return nil
}

// maxCount bounds a stored count, so that a corrupt record cannot
// overflow the sums of a read.
const maxCount = 1 << 62

// Restore resets c to the records in src for graph g. A record that does
// not decode, or whose degrees disagree with g's arcs, is an error.
func (c *Triads) Restore(g *delta.Graph, src delta.Source) error {
	if g.Kind() != delta.Directed {
		panic("directed: Restore from an undirected graph")
	}
	c.g = g
	c.recs = nil
	c.changed = nil
	c.grow(g.NumNodes())
	for x := range uint32(g.NumNodes()) {
		b, err := src.Record(x)
		if err != nil {
			return err
		}
		r := &c.recs[x]
		if err := decodeRecord(b, r); err != nil {
			return fmt.Errorf("record of node %d: %w", x, err)
		}
		out, in := g.Out(x), g.In(x)
		both := int64(out.AndCardinality(in))
		if want := [3]int64{int64(out.GetCardinality()) - both, int64(in.GetCardinality()) - both, both}; want != r.deg {
			return fmt.Errorf("record of node %d: degrees %v, graph has %v", x, r.deg, want)
		}
	}
	clear(c.changed)
	return nil
}

// Derive appends node x's orbit counts at the state src holds: x's record,
// its adjacency, and the degrees in its neighbours' records. It does not
// read the in-memory state. A neighbour that is a hub costs one record
// read like any other.
func (c *Triads) Derive(src delta.Source, x uint32, dst []uint64) ([]uint64, error) {
	dst = append(dst[:0], make([]uint64, c.NumOrbits())...)
	s := c.pool.Get().(*readScratch)
	defer c.pool.Put(s)
	var r triadRecord
	b, err := src.Record(x)
	if err != nil {
		return nil, err
	}
	if err := decodeRecord(b, &r); err != nil {
		return nil, fmt.Errorf("record of node %d: %w", x, err)
	}
	s.adj, err = src.Adjacent(x, s.adj[:0])
	if err != nil {
		return nil, err
	}
	var w [3][3]int64
	var ry triadRecord
	for _, y := range s.adj {
		t := uint8(y.Links & (delta.LinkOut | delta.LinkIn))
		if t == 0 {
			return nil, fmt.Errorf("node %d: neighbour %d without an arc", x, y.Node)
		}
		b, err := src.Record(y.Node)
		if err != nil {
			return nil, err
		}
		if err := decodeDegrees(b, &ry.deg); err != nil {
			return nil, fmt.Errorf("record of node %d: %w", y.Node, err)
		}
		for k := range 3 {
			w[t-1][k] += ry.deg[k]
		}
	}
	if err := c.solve(s, x, &r.deg, &r.tri, &w, dst); err != nil {
		return nil, fmt.Errorf("records around node %d do not agree: %w", x, err)
	}
	return dst, nil
}

// decodeDegrees reads only the three degrees at the front of a record.
func decodeDegrees(b []byte, d *[3]int64) error {
	*d = [3]int64{}
	for i := 0; i < 3 && len(b) > 0; i++ {
		v, n := binary.Uvarint(b)
		if n <= 0 || v > maxCount {
			return fmt.Errorf("degree %d does not decode", i)
		}
		d[i] = int64(v)
		b = b[n:]
	}
	return nil
}
