package five

import "orbitwatch/delta/catalog"

// worker is one goroutine's scratch space and core counts. acc[x·58 + o−15]
// counts how often the core listing reached node x in 5-node orbit o.
type worker struct {
	c   *csr
	eq  *equations
	acc []uint64

	mask []uint8 // attachment of a node to the current core's positions
	list []uint32

	// Wedges v–a–c of the current v, grouped by c: a linked list per c
	// from head[c] (valid while hstamp[c] == v+1) through wnext.
	nbrOf   []uint32 // nbrOf[y] == v+1 only when y is a neighbour of v
	hstamp  []uint32
	head    []int32
	wa      []uint32
	wnext   []int32
	reached []uint32
	as, bs  []uint32

	// squares[x] counts the 4-cycles (not necessarily induced) through x
	// found by this worker.
	squares []int64
}

func newWorker(c *csr, eq *equations) *worker {
	n := c.n
	return &worker{c: c, eq: eq, acc: make([]uint64, n*num5), mask: make([]uint8, n),
		nbrOf: make([]uint32, n), hstamp: make([]uint32, n), head: make([]int32, n), squares: make([]int64, n)}
}

// Code bits: a triangle on positions 0, 1, 2; a 4-cycle 0–1–2–3–0; and
// the bits joining position 3 or 4 to the core positions set in a mask.
var (
	triCode = bitOf(0, 1) | bitOf(0, 2) | bitOf(1, 2)
	c4Code  = bitOf(0, 1) | bitOf(1, 2) | bitOf(2, 3) | bitOf(0, 3)
	c5Code  = c4Code&^bitOf(0, 3) | bitOf(3, 4) | bitOf(0, 4)
	attach3 = attachBits(3, 3)
	attach4 = attachBits(4, 3)
	attachC = attachBits(4, 4)
	bit34   = bitOf(3, 4)
)

func bitOf(i, j int) uint32 { return 1 << catalog.PairBit(i, j) }

// attachBits returns, for every mask of the first k positions, the code
// bits joining position p to the positions in the mask.
func attachBits(p, k int) []uint32 {
	out := make([]uint32, 1<<k)
	for m := range out {
		for i := range k {
			if m>>i&1 != 0 {
				out[m] |= bitOf(i, p)
			}
		}
	}
	return out
}

// credit counts the connected 5-node set t (tuple positions 0–4, code
// its induced adjacency code) once for each member's orbit.
func (w *worker) credit(t *[5]uint32, code uint32) {
	_, orbs := w.eq.cat.Lookup(5, code)
	for p, x := range t {
		w.acc[int(x)*num5+int(orbs[p])-first5]++
	}
}

// triangleCores lists the triangles whose lowest-ranked node is v (edges
// oriented up the degree order, so each triangle once) and counts the
// connected 5-node sets that extend each by two nodes.
func (w *worker) triangleCores(v uint32) {
	c := w.c
	mark := v + 1
	for _, u := range c.up(v) {
		w.nbrOf[u] = mark
	}
	for _, u := range c.up(v) {
		for _, x := range c.up(u) {
			if w.nbrOf[x] == mark {
				w.extendTriangle(v, u, x)
			}
		}
	}
}

// extendTriangle counts every 5-node set {a, b, x, w1, w2} ⊇ the
// triangle that is connected: w1 and w2 both adjacent to the triangle, or
// w1 adjacent to it and w2 adjacent to w1 only. Sets with w2 beyond the
// triangle and adjacent pairs w1–w2 are listed one by one; the
// non-adjacent pairs, which around a hub number C(d, 2), are counted by
// the nodes' attachments to the triangle (7 classes), so the work is
// linear in the degrees of the triangle's neighbours.
func (w *worker) extendTriangle(a, b, x uint32) {
	c := w.c
	core := [3]uint32{a, b, x}
	l := w.list[:0]
	for i, t := range core {
		for _, y := range c.nb(t) {
			if y == a || y == b || y == x {
				continue
			}
			if w.mask[y] == 0 {
				l = append(l, y)
			}
			w.mask[y] |= 1 << i
		}
	}
	var size [8]int64        // nodes of l per attachment class
	var adjPairs [8][8]int64 // adjacent pairs of l per class pair, each once
	for _, y := range l {
		size[w.mask[y]]++
	}
	t := [5]uint32{a, b, x}
	for _, w1 := range l {
		t[3] = w1
		m1 := w.mask[w1]
		code := triCode | attach3[m1]
		var near [8]int64 // neighbours of w1 in l per class
		var chains int64  // neighbours of w1 beyond the triangle's reach
		_, chain := w.eq.cat.Lookup(5, code|bit34)
		for _, y := range c.nb(w1) {
			m2 := w.mask[y]
			switch {
			case m2 != 0:
				near[m2]++
				if y > w1 {
					adjPairs[min(m1, m2)][max(m1, m2)]++
					t[4] = y
					w.credit(&t, code|attach4[m2]|bit34)
				}
			case y != a && y != b && y != x:
				chains++
				w.acc[int(y)*num5+int(chain[4])-first5]++
			}
		}
		if chains > 0 {
			for p, y := range t[:4] {
				w.acc[int(y)*num5+int(chain[p])-first5] += uint64(chains)
			}
		}
		// w1's non-adjacent partners in l, class by class.
		for m2 := uint8(1); m2 < 8; m2++ {
			k := size[m2] - near[m2]
			if m2 == m1 {
				k--
			}
			if k > 0 {
				_, orbs := w.eq.cat.Lookup(5, code|attach4[m2])
				w.acc[int(w1)*num5+int(orbs[3])-first5] += uint64(k)
			}
		}
	}
	// The triangle's nodes once per non-adjacent pair.
	for m1 := uint8(1); m1 < 8; m1++ {
		for m2 := m1; m2 < 8; m2++ {
			pairs := size[m1] * size[m2]
			if m1 == m2 {
				pairs = size[m1] * (size[m1] - 1) / 2
			}
			pairs -= adjPairs[m1][m2]
			if pairs <= 0 {
				continue
			}
			_, orbs := w.eq.cat.Lookup(5, triCode|attach3[m1]|attach4[m2])
			for p, y := range core {
				w.acc[int(y)*num5+int(orbs[p])-first5] += uint64(pairs)
			}
		}
	}
	for _, y := range l {
		w.mask[y] = 0
	}
	w.list = l
}

// cycleCores lists the induced 4-cycles and 5-cycles whose highest-ranked
// node is v, each once, and counts the 5-node sets they make: a 4-cycle
// with each node adjacent to it, a 5-cycle alone. Both start from the
// wedges v–a–y with a and y ranked below v, y not adjacent to v (which
// an induced cycle through v needs). The same wedges, with y adjacent to
// v or not, give every node's non-induced 4-cycles (squares), which the
// tree formulas read.
func (w *worker) cycleCores(v uint32) {
	c := w.c
	mark := v + 1
	for _, y := range c.nb(v) {
		w.nbrOf[y] = mark
	}
	w.wa, w.wnext, w.reached = w.wa[:0], w.wnext[:0], w.reached[:0]
	rv := c.rank[v]
	for _, a := range c.nb(v) {
		if c.rank[a] > rv {
			continue
		}
		for _, y := range c.nb(a) {
			if c.rank[y] >= rv {
				continue
			}
			if w.hstamp[y] != mark {
				w.hstamp[y] = mark
				w.head[y] = -1
				w.reached = append(w.reached, y)
			}
			w.wa = append(w.wa, a)
			w.wnext = append(w.wnext, w.head[y])
			w.head[y] = int32(len(w.wa) - 1)
		}
	}
	for _, y := range w.reached {
		w.as = w.wedges(y, w.as[:0])
		// Every 4-cycle v–a–y–b, induced or not, for the tree formulas.
		if k := int64(len(w.as)); k > 1 {
			pairs := k * (k - 1) / 2
			w.squares[v] += pairs
			w.squares[y] += pairs
			for _, a := range w.as {
				w.squares[a] += k - 1
			}
		}
		if w.nbrOf[y] == mark {
			continue // a chord v–y: no induced cycle through v and y
		}
		// 4-cycles v–a–y–b: induced when a and b are not adjacent.
		for i, a := range w.as {
			for _, b := range w.as[i+1:] {
				if !c.adjacent(a, b) {
					w.extendSquare(v, a, y, b)
				}
			}
		}
		// 5-cycles v–a–y–z–b with y < z: induced when a≁b, a≁z, b≁y.
		for _, z := range c.nb(y) {
			if z < y || w.hstamp[z] != mark || w.nbrOf[z] == mark {
				continue
			}
			w.bs = w.wedges(z, w.bs[:0])
			for _, a := range w.as {
				if c.adjacent(a, z) {
					continue
				}
				for _, b := range w.bs {
					if a != b && !c.adjacent(a, b) && !c.adjacent(b, y) {
						t := [5]uint32{v, a, y, z, b}
						w.credit(&t, c5Code)
					}
				}
			}
		}
	}
}

// wedges appends the nodes a of the wedges v–a–y of the current v.
func (w *worker) wedges(y uint32, dst []uint32) []uint32 {
	for i := w.head[y]; i >= 0; i = w.wnext[i] {
		dst = append(dst, w.wa[i])
	}
	return dst
}

// extendSquare counts the 5-node sets made of the induced 4-cycle
// p0–p1–p2–p3–p0 and one node adjacent to it.
func (w *worker) extendSquare(p0, p1, p2, p3 uint32) {
	c := w.c
	core := [4]uint32{p0, p1, p2, p3}
	l := w.list[:0]
	for i, t := range core {
		for _, y := range c.nb(t) {
			if y == p0 || y == p1 || y == p2 || y == p3 {
				continue
			}
			if w.mask[y] == 0 {
				l = append(l, y)
			}
			w.mask[y] |= 1 << i
		}
	}
	// The extension node is credited one by one, the cycle's nodes once
	// per attachment class.
	var size [16]uint64
	for _, y := range l {
		m := w.mask[y]
		_, orbs := w.eq.cat.Lookup(5, c4Code|attachC[m])
		w.acc[int(y)*num5+int(orbs[4])-first5]++
		size[m]++
		w.mask[y] = 0
	}
	for m, k := range size {
		if k == 0 {
			continue
		}
		_, orbs := w.eq.cat.Lookup(5, c4Code|attachC[m])
		for p, x := range core {
			w.acc[int(x)*num5+int(orbs[p])-first5] += k
		}
	}
	w.list = l
}
