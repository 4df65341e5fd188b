package five

// local holds per-node and per-edge quantities the tree formulas read:
// the triangles of every edge, and sums over a node's neighbours.
type local struct {
	c    *csr
	etri []uint32 // etri[i]: common neighbours of x and adj[i], i in x's list
	// Per node x, with d(·) the degree and N(x) the neighbours:
	tri []int64 // triangles at x
	s1  []int64 // Σ_{y∈N(x)} (d(y)−1)
	q   []int64 // Σ_{y∈N(x)} C(d(y)−1, 2)
	c3  []int64 // Σ_{y∈N(x)} C(d(y)−1, 3)
	s2  []int64 // Σ_{y∈N(x)} s1(y)
	t2  []int64 // Σ_{y∈N(x)} tri(y)
	sq  []int64 // Σ_{y∈N(x)} q(y)
	ss2 []int64 // Σ_{y∈N(x)} s2(y)
	// squares[x] counts the 4-cycles through x, induced or not.
	squares []int64
	ck      checked
}

func newLocal(c *csr) *local {
	return &local{c: c, etri: make([]uint32, len(c.adj))}
}

// triangles sets etri for x's edges by merging sorted lists, or by
// binary search when one list is much longer.
func (l *local) triangles(x uint32) {
	c := l.c
	nx := c.nb(x)
	for i, y := range nx {
		l.etri[c.off[x]+i] = uint32(intersectCount(nx, c.nb(y)))
	}
}

func intersectCount(a, b []uint32) int {
	if len(a) > len(b) {
		a, b = b, a
	}
	n := 0
	if len(a)*16 < len(b) {
		for _, x := range a {
			lo, hi := 0, len(b)
			for lo < hi {
				m := int(uint(lo+hi) >> 1)
				if b[m] < x {
					lo = m + 1
				} else {
					hi = m
				}
			}
			if lo < len(b) && b[lo] == x {
				n++
			}
			b = b[lo:]
		}
		return n
	}
	i, j := 0, 0
	for i < len(a) && j < len(b) {
		switch {
		case a[i] < b[j]:
			i++
		case a[i] > b[j]:
			j++
		default:
			n++
			i++
			j++
		}
	}
	return n
}

// sums fills the per-node sums from etri and the degrees.
func (l *local) sums() {
	c, ck := l.c, &l.ck
	n := c.n
	l.tri, l.s1, l.q, l.c3 = make([]int64, n), make([]int64, n), make([]int64, n), make([]int64, n)
	l.s2, l.t2, l.sq, l.ss2 = make([]int64, n), make([]int64, n), make([]int64, n), make([]int64, n)
	for x := range uint32(n) {
		var t int64
		for i := c.off[x]; i < c.off[x+1]; i++ {
			t += int64(l.etri[i])
		}
		l.tri[x] = t / 2
		for _, y := range c.nb(x) {
			dy := int64(c.deg(y))
			l.s1[x] = ck.add(l.s1[x], dy-1)
			l.q[x] = ck.add(l.q[x], ck.choose(dy-1, 2))
			l.c3[x] = ck.add(l.c3[x], ck.choose(dy-1, 3))
		}
	}
	for x := range uint32(n) {
		for _, y := range c.nb(x) {
			l.s2[x] = ck.add(l.s2[x], l.s1[y])
			l.t2[x] = ck.add(l.t2[x], l.tri[y])
			l.sq[x] = ck.add(l.sq[x], l.q[y])
		}
	}
	for x := range uint32(n) {
		for _, y := range c.nb(x) {
			l.ss2[x] = ck.add(l.ss2[x], l.s2[y])
		}
	}
}
