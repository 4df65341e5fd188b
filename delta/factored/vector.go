package factored

import (
	"fmt"
	"math/bits"
)

// local is what one node's vector is derived from, wherever it was read
// (the in-memory records, or a store's records at one version): with
// d = d(x), t = t(x) and sums over y ∈ N(x),
//
//	s1 = Σ d(y)                 a  = Σ s1(y)
//	b  = Σ C(d(y)−1, 2)          ct = Σ t(y)
//	dd = Σ tri(x,y)·(d(y)−2)     ee = Σ C(tri(x,y), 2)
//
// and x's K4s, non-induced 4-cycles and diamonds at a degree-2 node, whole
// (kept parts plus the heavy pair parts).
type local struct {
	d, t, s1          uint64
	a, b, ct, dd, ee  uint64
	k4, cyc, dd2      uint64
	overflow, invalid bool
}

// add adds y to *s, noting an overflow.
func (q *local) add(s *uint64, y uint64) {
	var carry uint64
	*s, carry = bits.Add64(*s, y, 0)
	if carry != 0 {
		q.overflow = true
	}
}

func (q *local) mul(x, y uint64) uint64 {
	hi, lo := bits.Mul64(x, y)
	if hi != 0 {
		q.overflow = true
	}
	return lo
}

func (q *local) sub(x, y uint64) uint64 {
	d, borrow := bits.Sub64(x, y, 0)
	if borrow != 0 {
		q.invalid = true
	}
	return d
}

// u converts a record value, which is never negative in a consistent
// state.
func (q *local) u(x int64) uint64 {
	if x < 0 {
		q.invalid = true
		return 0
	}
	return uint64(x)
}

// neighbour adds one neighbour y to the sums: its degree, triangles and
// degree sum, and the triangle count e of the edge x–y.
func (q *local) neighbour(dy, ty, s1y, e uint64) {
	q.add(&q.s1, dy)
	q.add(&q.a, s1y)
	if dy >= 3 {
		q.add(&q.b, q.mul(dy-1, dy-2)/2)
	}
	q.add(&q.ct, ty)
	if dy >= 2 {
		q.add(&q.dd, q.mul(e, dy-2))
	} else if e != 0 {
		q.invalid = true
	}
	if e >= 2 {
		q.add(&q.ee, q.mul(e, e-1)/2)
	}
}

// vector derives x's orbit vector into dst[:orbits] from q: the
// non-induced pattern counts
//
//	N0 = d, N1 = s1 − d (3-path ends), N2 = C(d,2), N3 = t
//	N4  = a − s1 − d(d−1) − 2t       (4-path ends x–y–z–w: w ∈ N(z)\{y}, minus w = x once per triangle edge)
//	N5  = (d−1)·(s1−d) − 2t          (4-path middles y–x–z–w, minus w = y)
//	N6  = b, N7 = C(d,3)             (3-star leaf, centre)
//	N8  = cyc, N12 = dd2, N14 = k4
//	N9  = ct − 2t                    (triangle hanging from a neighbour, not at x)
//	N10 = dd, N11 = t·(d−2)          (tailed triangle, x of degree 2 or 3)
//	N13 = ee                         (diamond, x of degree 3)
//
// solved for induced counts by the overlap equations.
func (c *Counter) vector(x uint32, q *local, dst []uint64) ([]uint64, error) {
	dst = append(dst[:0], make([]uint64, c.orbits)...)
	var n [maxOrbits]uint64
	d, t := q.d, q.t
	n[0], n[1], n[3] = d, q.sub(q.s1, d), t
	if d >= 2 {
		n[2] = q.mul(d, d-1) / 2
	}
	if c.maxNodes == 4 {
		twoT := q.mul(2, t)
		var dd1 uint64
		if d >= 1 {
			dd1 = q.mul(d, d-1)
			n[5] = q.sub(q.mul(d-1, n[1]), twoT)
		}
		n[4] = q.sub(q.sub(q.sub(q.a, q.s1), dd1), twoT)
		n[6] = q.b
		if d >= 3 {
			n[7] = choose3(q, d)
		}
		if d >= 2 {
			n[11] = q.mul(t, d-2)
		} else if t != 0 {
			q.invalid = true
		}
		n[8], n[9], n[10] = q.cyc, q.sub(q.ct, twoT), q.dd
		n[12], n[13], n[14] = q.dd2, q.ee, q.k4
	}
	if q.overflow {
		return nil, fmt.Errorf("factored: node %d: an orbit count exceeds 2^64−1", x)
	}
	if q.invalid {
		return nil, fmt.Errorf("factored: node %d: records contradict each other (a count solves below zero)", x)
	}
	if p, ok := c.eq.solve(n[:c.orbits]); !ok {
		return nil, fmt.Errorf("factored: node %d: orbit %d solves below zero: records contradict each other", x, p)
	}
	copy(dst, n[:c.orbits])
	return dst, nil
}

// choose3 returns C(d,3) for d ≥ 3 without overflowing early: one of d,
// d−1, d−2 is divisible by 3 and one of d, d−1 by 2.
func choose3(q *local, d uint64) uint64 {
	f := [3]uint64{d, d - 1, d - 2}
	for i := range f {
		if f[i]%3 == 0 {
			f[i] /= 3
			break
		}
	}
	for i := range 2 {
		if f[i]%2 == 0 {
			f[i] /= 2
			break
		}
	}
	return q.mul(q.mul(f[0], f[1]), f[2])
}

// Vector appends node x's exact orbit vector to dst[:0]: O(d(x)) work for
// a light node (its neighbours' degrees, triangles and light-degree sums,
// the edge triangle counts), O(1) for a heavy one (its kept sums), plus
// the pair counts of the heavy neighbours (O(H²) for H of them). No
// allocation when dst has room.
func (c *Counter) Vector(x uint32, dst []uint64) ([]uint64, error) {
	var q local
	if int(x) < len(c.nodes) {
		c.gather(x, &q)
	}
	return c.vector(x, &q, dst)
}

// s1 returns Σ_{y∈N(x)} d(y): the light part kept, the heavy part added.
func (c *Counter) s1(x uint32) int64 {
	s := c.nodes[x].l1
	for _, h := range c.heavyN[x] {
		s += c.nodes[h].deg
	}
	return s
}

// gather reads x's records and its neighbours' into q.
func (c *Counter) gather(x uint32, q *local) {
	nx := &c.nodes[x]
	q.d, q.t, q.s1 = q.u(nx.deg), q.u(nx.tri), q.u(c.s1(x))
	if c.maxNodes == 3 {
		return
	}
	if hs := c.hv[x]; hs != nil {
		// a = Σ_y (l1(y) + Σ_{g heavy ∈ N(y)} d(g)) = al + d(x)² + Σ_g d(g)·codeg(x,g)
		q.a = q.u(hs.al)
		q.add(&q.a, q.mul(q.d, q.d))
		for g, n := range hs.row {
			q.add(&q.a, q.mul(q.u(c.nodes[g].deg), uint64(n)))
		}
		q.b, q.ct, q.dd, q.ee = q.u(hs.b), q.u(hs.ct), q.u(hs.dd), q.u(hs.ee)
	} else {
		kept := q.s1
		q.s1 = 0
		for it := c.adj[x].runs(); it.next(); {
			for i, y := range it.nbr {
				ny := &c.nodes[y]
				q.neighbour(q.u(ny.deg), q.u(ny.tri), q.u(c.s1(y)), uint64(it.tri[i]))
			}
		}
		if q.s1 != kept {
			q.invalid = true
		}
	}
	f := &c.four[x]
	q.k4, q.cyc, q.dd2 = q.u(f.k4), q.u(f.cyc), q.u(f.dd2)
	c.heavyPairs(x, q)
}

// heavyPairs adds to q the 4-cycles and diamonds of x read from heavy pair
// counts: for every pair {p, r} of heavy neighbours, codeg(p,r) − 1
// 4-cycles x–p–o–r, and as many diamonds with chord p–r when it is an
// edge.
func (c *Counter) heavyPairs(x uint32, q *local) {
	hn := c.heavyN[x]
	for i, p := range hn {
		row := c.hv[p].row
		for _, r := range hn[i+1:] {
			n := uint64(row[r])
			if n == 0 {
				q.invalid = true
				continue
			}
			q.add(&q.cyc, n-1)
			if c.linked(p, r) {
				q.add(&q.dd2, n-1)
			}
		}
	}
}
