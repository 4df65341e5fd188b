package generic

import (
	"orbitwatch/delta"
	"orbitwatch/delta/catalog"
)

// numClasses is the number of ways a node can be joined to u and v: two
// bits of arcs from u and v, two of arcs to them (undirected: the first
// two bits only).
const numClasses = 16

// engine is the default incremental engine: the enumerator's visit order,
// with three savings that do not change the sum of the emitted changes.
//
//  1. Changes of members that stay in S while it grows (u, v, and for
//     k ≥ 4 the nodes at positions 2..k−2) are summed per orbit in acc and
//     emitted once per member, not once per set.
//  2. At the last position the code of S+x depends on x only through
//     x's mask, so the older members' changes are added once per distinct
//     code, times the number of x giving it.
//  3. For k = 4, the sets {u,v,a,b} with a, b both joined to u or v but not
//     to each other are not visited: their code is fixed by the classes of
//     a and b (how each is joined to u and v), so a's change is its own
//     orbit times the number of such partners b per class, counted as
//     (nodes of the class) − (neighbours of a in it) − [a in it], and u's
//     and v's changes are the number of such pairs per class pair.
//
// Sets with a, b adjacent, or b joined to a only, are visited one by one.
type engine struct {
	halo
	ext [maxNodes + 1][]uint32
	// acc[p][o] is the pending change of orbit o of the member at position
	// p; dirty[p] lists the orbits it may hold.
	acc   [maxNodes][]int64
	dirty [maxNodes][]int32
	// count[code] is how many last members gave the set code code; codes
	// lists the codes with a count.
	count []int64
	codes []uint32
	// For k = 4: classSize[c] nodes joined to u or v are in class c;
	// pairs[c][d] counts, from the side of its class-c member, the
	// non-adjacent pairs with the other member in class d; adjacent[c]
	// counts the current a's neighbours in class c.
	classSize [numClasses]int64
	pairs     [numClasses][numClasses]int64
	adjacent  [numClasses]int64
	warm      uint64 // kept so the warm-up reads are not dropped
}

// NewEngine returns the incremental Engine to use for cat's kind and size:
// the same changes as NewEnumerator, most of them summed per (node, orbit)
// before they are emitted, at a fraction of the set visits for k = 4. It allocates only when
// the graph or a neighbourhood has grown past every size seen before. The
// engine is not safe for concurrent use.
func NewEngine(cat *catalog.Catalog) delta.Engine {
	t := newTables(cat)
	e := &engine{halo: halo{t: t}, count: make([]int64, len(t.start[t.k]))}
	for p := range e.acc {
		e.acc[p] = make([]int64, t.orbits)
	}
	return &front{t: t, r: e}
}

func (e *engine) run(g *delta.Graph, u, v uint32, sign int64, neg bool, emit delta.Emit) {
	code, ext := e.seed(g, u, v, neg, e.ext[2][:0])
	e.ext[2] = ext
	e.add(e.t.all(2, code), 1, 0, maxNodes)
	switch e.t.k {
	case 2:
	case 4:
		e.pairLevel(g, code, ext, sign, emit)
	default:
		e.extend(g, 2, code, ext, sign, emit)
	}
	e.flush(0, sign, emit)
	e.flush(1, sign, emit)
	e.leave(1)
	e.leave(0)
}

// add adds mult times each change of list at a position in [lo, hi) to the
// pending changes.
func (e *engine) add(list []change, mult int64, lo, hi uint8) {
	for _, c := range list {
		if c.pos < lo || c.pos >= hi {
			continue
		}
		a := &e.acc[c.pos][c.orbit]
		if *a == 0 {
			e.dirty[c.pos] = append(e.dirty[c.pos], c.orbit)
		}
		*a += int64(c.d) * mult
	}
}

// flush emits the pending changes of the member at position p.
func (e *engine) flush(p int, sign int64, emit delta.Emit) {
	acc := e.acc[p]
	for _, o := range e.dirty[p] {
		if acc[o] != 0 {
			emit(e.nodes[p], int(o), acc[o]*sign)
			acc[o] = 0
		}
	}
	e.dirty[p] = e.dirty[p][:0]
}

// extend fills position d < k−1 from ext as the enumerator does, keeping
// the changes of the members in S pending.
func (e *engine) extend(g *delta.Graph, d int, code uint32, ext []uint32, sign int64, emit delta.Emit) {
	if d == e.t.k-1 {
		e.last(d, code, ext, sign, emit)
		return
	}
	for i, w := range ext {
		e.nodes[d] = w
		c := code | e.codeAt(d, w)
		e.add(e.t.all(d+1, c), 1, 0, maxNodes)
		next := append(e.ext[d+1][:0], ext[i+1:]...)
		next = e.join(g, d, w, next)
		e.ext[d+1] = next
		e.extend(g, d+1, c, next, sign, emit)
		e.flush(d, sign, emit)
		e.leave(d)
	}
}

// last fills the last position d from ext: each x emits its own changes at
// once; the older members' changes are added per distinct code.
func (e *engine) last(d int, code uint32, ext []uint32, sign int64, emit delta.Emit) {
	for _, x := range ext {
		e.visit(d, code|e.codeAt(d, x), x, sign, emit)
	}
	e.settle(d)
}

// visit counts the (d+1)-member set with code code whose newest member x
// sits at position d: x's changes are emitted, the others' deferred.
func (e *engine) visit(d int, code uint32, x uint32, sign int64, emit delta.Emit) {
	for _, c := range e.t.newest(d+1, code) {
		emit(x, int(c.orbit), int64(c.d)*sign)
	}
	if e.count[code] == 0 {
		e.codes = append(e.codes, code)
	}
	e.count[code]++
}

// settle adds the deferred changes of the members below position d.
func (e *engine) settle(d int) {
	for _, c := range e.codes {
		e.add(e.t.older(d+1, c), e.count[c], 0, maxNodes)
		e.count[c] = 0
	}
	e.codes = e.codes[:0]
}

// class returns how a node with mask m is joined to u and v: bits 0–1
// arcs from u, v (undirected: edges), bits 2–3 arcs to them.
func class(m uint16) int { return int(m&3 | (m>>inShift&3)<<2) }

// classCode returns the code of the arcs between a node of class c at
// position p and u, v.
func (t *tables) classCode(p, c int) uint32 { return t.outBits[p][c&3] | t.inBits[p][c>>2] }

// pairLevel fills positions 2 and 3 for k = 4 (see the engine comment,
// saving 3). ext lists the nodes joined to u or v.
func (e *engine) pairLevel(g *delta.Graph, code uint32, ext []uint32, sign int64, emit delta.Emit) {
	t := e.t
	// Reading every neighbour's bitmaps first, in a loop whose iterations
	// do not depend on each other, lets their cache misses overlap; the
	// joins below then find them in cache (measured: about a quarter less
	// CPU per event on the flat payments graph, BenchmarkDirected4).
	var warm uint64
	for _, x := range ext {
		e.classSize[class(e.mask[x])]++
		warm += g.Out(x).GetCardinality() + g.In(x).GetCardinality()
	}
	e.warm = warm
	for _, a := range ext {
		ca := class(e.mask[a])
		c3 := code | e.codeAt(2, a)
		e.add(t.all(3, c3), 1, 0, maxNodes)
		e.ext[3] = e.join(g, 2, a, e.ext[3][:0]) // unused: b is read from nbr
		nbr := e.nbr[2]
		for i, b := range nbr {
			m := e.mask[b]
			if m&member != 0 || (i >= e.nOut[2] && m&(1<<2) != 0) {
				continue // u or v, or a reciprocal neighbour seen as a successor
			}
			if m&seedBits != 0 {
				e.adjacent[class(m)]++
				if b < a {
					continue // the pair was visited from b
				}
			}
			e.visit(3, c3|e.codeAt(3, b), b, sign, emit)
		}
		e.settle(3)
		for cb, size := range e.classSize {
			p := size - e.adjacent[cb]
			if cb == ca {
				p--
			}
			e.adjacent[cb] = 0
			if p <= 0 {
				continue
			}
			c4 := c3 | t.classCode(3, cb)
			e.add(t.older(4, c4), p, 2, 3) // a's own changes at position 2
			e.pairs[ca][cb] += p
		}
		e.flush(2, sign, emit)
		e.leave(2)
	}
	for ca := range e.pairs {
		for cb := ca; cb < numClasses; cb++ {
			n := e.pairs[ca][cb]
			if ca == cb {
				n /= 2
			}
			if n > 0 {
				e.add(t.older(4, code|t.classCode(2, ca)|t.classCode(3, cb)), n, 0, 2)
			}
		}
	}
	e.pairs = [numClasses][numClasses]int64{}
	e.classSize = [numClasses]int64{}
}
