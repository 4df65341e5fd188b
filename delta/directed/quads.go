package directed

import (
	"fmt"
	"slices"

	"orbitwatch/delta"
)

// DefaultHeavy is the degree from which a node is heavy in Quads. It
// bounds the walks of a read (a light neighbour's neighbours are walked)
// and the number of heavy nodes (at most 2|E|/θ), whose pair counts the
// updates keep. A heavy node turns light again below θ/2, so a node near
// the threshold does not flip back and forth.
const DefaultHeavy = 128

// heavyNode is what only a heavy node h keeps: the degree sums of its
// light neighbours wl[a][b] = Σ_{type(h,z)=a, z light} d_b(z) (its heavy
// neighbours' degrees are added on read, so a hub's degree change moves
// nothing here), and its typed codegree with every other heavy node it
// shares a neighbour with: pair[h2][p·3+q] counts the z with
// type(h,z) = p+1 and type(h2,z) = q+1 (rows that fall to zero are
// dropped).
type heavyNode struct {
	wl   [3][3]int64
	pair map[uint32]*tri9
}

// Quads counts the directed 2–4 node orbits (730) in factored form. Per
// node it keeps what Triads keeps (typed degrees, triangles by orbit);
// heavy nodes (degree ≥ θ) also keep their light neighbours' degree sums,
// their heavy neighbours, and their typed codegrees with the other heavy
// nodes. Everything else —
// paths, stars, tailed triangles, 4-cycles, diamonds, K4s — is derived on
// read from a node's record, its neighbours' records and adjacency, and
// the adjacency of its light neighbours (read.go).
//
// An arc event costs what it costs Triads plus a term per heavy neighbour
// of a light endpoint (and, for an arc between two heavy nodes, per heavy
// neighbour of either): no sum over a hub's neighbours is ever pushed to
// them, and a hub's own degree is in no stored sum. A node turning heavy or light costs O(d·H) once. A read of x
// costs O(Σ over x's light neighbours y of d(y), times the number of x's
// heavy neighbours) plus the triangles at x: small for a customer of a
// merchant with a million customers; for the merchant itself, its
// neighbours' neighbours.
type Quads struct {
	t     *Triads
	eq    *equations
	theta int64
	heavy map[uint32]*heavyNode
	// heavyN[x] lists x's heavy neighbours with type(x, h).
	heavyN [][]typed
	fault  error
	// triOrdered[a][b][c] is the record slot and diagonal that give the
	// ordered triangles tri[a][b][c] = diag · count of the slot's orbit.
	triOrdered [3][3][3]struct {
		slot int8
		diag int64
	}
	reads readPool
}

// NewQuads returns an empty directed 2–4 node Counter with heavy
// threshold theta (DefaultHeavy when theta ≤ 0).
func NewQuads(theta int) *Quads {
	if theta <= 0 {
		theta = DefaultHeavy
	}
	q := &Quads{t: NewTriads(), eq: equationsFor(4), theta: int64(theta), heavy: map[uint32]*heavyNode{}}
	for a := range 3 {
		for b := range 3 {
			for c := range 3 {
				slot := q.t.triIndex[a][b][c]
				q.triOrdered[a][b][c].slot = slot
				q.triOrdered[a][b][c].diag = q.eq.diag[q.t.triOrbit[slot]]
			}
		}
	}
	q.reads.init()
	return q
}

// Kind returns delta.Directed.
func (q *Quads) Kind() delta.Kind { return delta.Directed }

// MaxNodes returns 4.
func (q *Quads) MaxNodes() int { return 4 }

// NumOrbits returns 730.
func (q *Quads) NumOrbits() int { return q.eq.cat.NumOrbits() }

func (q *Quads) grow(n int) {
	q.t.grow(n)
	if len(q.heavyN) < n {
		q.heavyN = slices.Grow(q.heavyN, n-len(q.heavyN))[:n]
	}
}

// Insert updates the records for adding the arc u→v to g, which lacks it.
func (q *Quads) Insert(g *delta.Graph, u, v uint32, _ bool) error {
	return q.event(g, u, v, true)
}

// Delete updates the records for removing the arc u→v from g, which has it.
func (q *Quads) Delete(g *delta.Graph, u, v uint32) error {
	return q.event(g, u, v, false)
}

// event applies an arc event: the heavy terms that involve the pair (u, v)
// or the degrees of u and v are taken out, Triads updates degrees and
// triangles, the heavy-neighbour lists follow the pair's new type, the
// terms are put back, and u and v turn heavy or light if their degree
// crossed the threshold.
func (q *Quads) event(g *delta.Graph, u, v uint32, insert bool) error {
	if g.Kind() != delta.Directed || u == v {
		panic("directed: event on a self-loop or an undirected graph")
	}
	q.grow(g.NumNodes())
	q.fault = nil
	var old uint8
	if g.Out(u).Contains(v) {
		old |= tOut
	}
	if g.In(u).Contains(v) {
		old |= tIn
	}
	now := old | tOut
	if !insert {
		now = old &^ tOut
	}
	q.terms(u, v, old, -1)
	if err := q.t.event(g, u, v, insert); err != nil {
		return err
	}
	if d := max(degree(&q.t.recs[u]), degree(&q.t.recs[v])); d > delta.MaxRecountDegree && q.fault == nil {
		q.fault = fmt.Errorf("directed: degree %d of node %d or %d above 2^20, a read's counts could overflow int64", d, u, v)
	}
	q.relink(u, v, now)
	q.terms(u, v, now, 1)
	q.flip(g, u, v, now)
	q.flip(g, v, u, rev(now))
	return q.fault
}

// terms moves by sign the heavy quantities that involve the pair (u, v) of
// type t (seen from u) or the degrees of u and v:
//
//	wl(h) for every heavy neighbour h of u when u is light: the term type(h,u) ⊗ d(u); the same for v
//	pair(u, h2) for u heavy, h2 a heavy neighbour of v: the count of z = v
//	pair(v, h2) for v heavy, h2 a heavy neighbour of u: the count of z = u
//
// (h = v among u's heavy neighbours carries the pair's own type).
func (q *Quads) terms(u, v uint32, t uint8, sign int64) {
	for _, e := range [2]struct {
		x, other uint32
		t        uint8
	}{{u, v, t}, {v, u, rev(t)}} {
		hx := q.heavy[e.x]
		if hx == nil {
			dx := &q.t.recs[e.x].deg
			for _, h := range q.heavyN[e.x] {
				hn := q.heavy[h.node]
				a := rev(h.t) // type(h, x)
				for b := range 3 {
					hn.wl[a-1][b] += sign * dx[b]
				}
				q.t.mark(h.node)
			}
		}
		// z = other, seen by the heavy x and the heavy neighbours of other.
		if hx == nil || e.t == 0 {
			continue
		}
		for _, h2 := range q.heavyN[e.other] {
			if h2.node == e.x {
				continue
			}
			// type(x, other) = e.t, type(h2, other) = rev(h2.t).
			q.addPair(e.x, h2.node, e.t, rev(h2.t), sign)
		}
	}
}

// addPair moves the codegree count of heavy nodes h1, h2 for a common
// neighbour z with type(h1,z) = p and type(h2,z) = r by sign, in both
// nodes' rows.
func (q *Quads) addPair(h1, h2 uint32, p, r uint8, sign int64) {
	q.bumpPair(h1, h2, (p-1)*3+r-1, sign)
	q.bumpPair(h2, h1, (r-1)*3+p-1, sign)
}

func (q *Quads) bumpPair(h1, h2 uint32, i uint8, sign int64) {
	hn := q.heavy[h1]
	row := hn.pair[h2]
	if row == nil {
		row = &tri9{}
		hn.pair[h2] = row
	}
	v := int64(row[i]) + sign
	if v < 0 && q.fault == nil {
		q.fault = fmt.Errorf("directed: codegree of heavy nodes %d and %d went negative", h1, h2)
		return
	}
	row[i] = uint32(v)
	if *row == (tri9{}) {
		delete(hn.pair, h2)
	}
	q.t.mark(h1)
}

// relink brings the heavy-neighbour lists of u and v in line with the
// pair's new type t (seen from u). A heavy node's list is part of its
// record.
func (q *Quads) relink(u, v uint32, t uint8) {
	if q.heavy[v] != nil {
		q.heavyN[u] = setTyped(q.heavyN[u], v, t)
		if q.heavy[u] != nil {
			q.t.mark(u)
		}
	}
	if q.heavy[u] != nil {
		q.heavyN[v] = setTyped(q.heavyN[v], u, rev(t))
		if q.heavy[v] != nil {
			q.t.mark(v)
		}
	}
}

// setTyped sets node's type in list (removing it when t is 0).
func setTyped(list []typed, node uint32, t uint8) []typed {
	for i := range list {
		if list[i].node == node {
			if t == 0 {
				return slices.Delete(list, i, i+1)
			}
			list[i].t = t
			return list
		}
	}
	if t != 0 {
		list = append(list, typed{node, t})
	}
	return list
}

// flip turns x heavy when its degree reaches θ and light when it falls
// below θ/2. The event is not yet in g: x's pair with other has type t.
func (q *Quads) flip(g *delta.Graph, x, other uint32, t uint8) {
	d := degree(&q.t.recs[x])
	switch h := q.heavy[x] != nil; {
	case !h && d >= q.theta:
		q.makeHeavy(q.neighboursAfter(g, x, other, t), x)
	case h && d < q.theta/2:
		q.makeLight(q.neighboursAfter(g, x, other, t), x)
	}
}

// neighboursAfter returns x's typed neighbours in g with the pair (x,
// other) set to type t: the adjacency after the event being applied.
func (q *Quads) neighboursAfter(g *delta.Graph, x, other uint32, t uint8) []typed {
	c := q.t
	c.out = load(&c.it, c.out[:0], g.Out(x))
	c.in = load(&c.it, c.in[:0], g.In(x))
	c.nbrs = mergeTyped(c.out, c.in, c.nbrs[:0])
	i, found := slices.BinarySearchFunc(c.nbrs, other, func(a typed, z uint32) int { return cmpNode(a.node, z) })
	switch {
	case found && t == 0:
		c.nbrs = slices.Delete(c.nbrs, i, i+1)
	case found:
		c.nbrs[i].t = t
	case t != 0:
		c.nbrs = slices.Insert(c.nbrs, i, typed{other, t})
	}
	return c.nbrs
}

// cmpNode orders node ids.
func cmpNode(a, b uint32) int {
	switch {
	case a < b:
		return -1
	case a > b:
		return 1
	}
	return 0
}

// makeHeavy gives x (with neighbours nbrs) its light neighbours' degree
// sums and its codegrees with the heavy nodes, takes its degree out of its
// heavy neighbours' sums, and lists it with its neighbours: O(d(x)·H).
func (q *Quads) makeHeavy(nbrs []typed, x uint32) {
	dx := &q.t.recs[x].deg
	for _, h := range q.heavyN[x] {
		hn := q.heavy[h.node]
		for b := range 3 {
			hn.wl[rev(h.t)-1][b] -= dx[b]
		}
	}
	hx := &heavyNode{pair: map[uint32]*tri9{}}
	for _, z := range nbrs {
		if q.heavy[z.node] == nil {
			dz := &q.t.recs[z.node].deg
			for b := range 3 {
				hx.wl[z.t-1][b] += dz[b]
			}
		}
	}
	q.heavy[x] = hx
	for _, z := range nbrs {
		for _, h := range q.heavyN[z.node] {
			q.addPair(x, h.node, z.t, rev(h.t), 1)
		}
		q.heavyN[z.node] = append(q.heavyN[z.node], typed{x, rev(z.t)})
		if q.heavy[z.node] != nil {
			q.t.mark(z.node)
		}
	}
	q.t.mark(x)
}

// makeLight undoes makeHeavy.
func (q *Quads) makeLight(nbrs []typed, x uint32) {
	for _, z := range nbrs {
		q.heavyN[z.node] = setTyped(q.heavyN[z.node], x, 0)
		if q.heavy[z.node] != nil {
			q.t.mark(z.node)
		}
	}
	for h := range q.heavy[x].pair {
		delete(q.heavy[h].pair, x)
		q.t.mark(h)
	}
	delete(q.heavy, x)
	dx := &q.t.recs[x].deg
	for _, h := range q.heavyN[x] {
		hn := q.heavy[h.node]
		for b := range 3 {
			hn.wl[rev(h.t)-1][b] += dx[b]
		}
		q.t.mark(h.node)
	}
	q.t.mark(x)
}

// Changed calls visit for every node whose record changed since the last
// call (or Restore), in increasing id order, and forgets them.
func (q *Quads) Changed(visit func(x uint32)) { q.t.Changed(visit) }
