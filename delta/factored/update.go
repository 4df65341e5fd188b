package factored

import "slices"

// containsRatio: a neighbour walk of a node a (cost d(a), one mark read
// each) is replaced by binary searches of a smaller set in N(a) when d(a)
// exceeds that set's size by more than this factor.
const containsRatio = 16

// update applies inserting (s = +1) or deleting (s = −1) the edge uv. Every
// count below is taken in G⁻, the graph without uv, so both directions
// share one derivation and differ only in sign. With A = N(u)\{v},
// B = N(v)\{u} and W = A ∩ B (the common neighbours), the changes are:
//
//	d(u), d(v)          ±1
//	s1(u) ±(d(v)+1), s1(v) ±(d(u)+1), s1(w) ±1 for w ∈ A, and again for w ∈ B
//	t(u), t(v) ±|W|,    t(r) ±1 and tri(u,r), tri(v,r) ±1 for r ∈ W, tri(u,v) = |W|
//	K4: k4(r) ±|N(r) ∩ W| for r ∈ W, k4(u), k4(v) ±e(W)
//	diamonds (x at a degree-2 node), with uv the middle edge: dd2(r) ±(|W|−1)
//	  for r ∈ W; with uv a side edge u–v, v and r ∈ W of degree 3: dd2(u)
//	  ±Σ_{r∈W} |N(r) ∩ B| and dd2(o) ±1 per r ∈ W, o ∈ N(r) ∩ B; the same with
//	  u and v swapped
//	4-cycles u–v–a–b: one per a ∈ B, b ∈ A ∩ N(a); cyc(u), cyc(v) ± their
//	  number, cyc(a) ±|N(a) ∩ A|, cyc(b) ±|N(b) ∩ B|
//
// so the nodes written are u, v, A ∪ B (s1, cyc, dd2) and W (t, k4, edge
// triangles). The work is d(u) + d(v) marks, Σ_{r∈W} min(d(r), d(u)+d(v))
// for the diamonds and K4s and, from the side with the smaller neighbour
// degree sum, Σ_a min(d(a), 16·d(other)) for the 4-cycles.
func (c *Counter) update(u, v uint32, s int64) {
	nu, nv := &c.nodes[u], &c.nodes[v]
	du, dv := nu.deg, nv.deg
	if s < 0 {
		du, dv = du-1, dv-1
	}
	costU, costV := nu.s1, nv.s1
	c.common = c.common[:0]
	c.markSide(u, v, 0, s)
	c.markSide(v, u, 1, s)
	nu.s1 += s * (dv + 1)
	nv.s1 += s * (du + 1)
	nu.deg += s
	nv.deg += s
	k := int64(len(c.common))
	nu.tri += s * k
	nv.tri += s * k
	for _, r := range c.common {
		c.nodes[r].tri += s
	}
	if c.maxNodes == 4 {
		c.diamonds(u, v, du+dv, s)
		var p int64
		if costU <= costV {
			p = c.cycles(u, v, 1, dv, s)
		} else {
			p = c.cycles(v, u, 0, du, s)
		}
		c.four[u].cyc += s * p
		c.four[v].cyc += s * p
	}
	c.edgeTriangles(u, v, s)
	for side, x := range [2]uint32{u, v} {
		m := c.marks[side]
		for _, y := range c.adj[x].nbr {
			m[y>>6] = 0
		}
	}
}

// markSide sets N(x)\{other} in marks[side] and x and N(x) in sources,
// moves their neighbour degree sums by s and, for the second side,
// collects the common neighbours.
func (c *Counter) markSide(x, other uint32, side int, s int64) {
	m, first := c.marks[side], c.marks[0]
	c.sources[x>>6] |= 1 << (x & 63)
	for _, y := range c.adj[x].nbr {
		if y == other {
			continue
		}
		c.nodes[y].s1 += s
		w, b := y>>6, uint64(1)<<(y&63)
		m[w] |= b
		c.sources[w] |= b
		if side == 1 && first[w]&b != 0 {
			c.common = append(c.common, y)
		}
	}
}

// edgeTriangles moves tri(u,r), tri(v,r) and their mirrors by s for every
// common neighbour r, then adds (insert) or removes (delete) the adjacency
// entries of uv itself, with tri(u,v) = |W|.
func (c *Counter) edgeTriangles(u, v uint32, s int64) {
	d := uint32(s) // mod 2^32, so ^0 subtracts one
	for _, r := range c.common {
		c.addTri(u, r, d)
		c.addTri(v, r, d)
		c.addTri(r, u, d)
		c.addTri(r, v, d)
	}
	k := uint32(len(c.common))
	for _, e := range [2][2]uint32{{u, v}, {v, u}} {
		a := &c.adj[e[0]]
		i, _ := slices.BinarySearch(a.nbr, e[1])
		if s > 0 {
			a.nbr = slices.Insert(a.nbr, i, e[1])
			a.tri = slices.Insert(a.tri, i, k)
		} else {
			a.nbr = slices.Delete(a.nbr, i, i+1)
			a.tri = slices.Delete(a.tri, i, i+1)
		}
	}
}

// addTri adds d to tri(x,y); y must be in N(x).
func (c *Counter) addTri(x, y, d uint32) {
	i, _ := slices.BinarySearch(c.adj[x].nbr, y)
	c.adj[x].tri[i] += d
}

// has reports whether y ∈ N(x).
func (c *Counter) has(x, y uint32) bool {
	_, ok := slices.BinarySearch(c.adj[x].nbr, y)
	return ok
}

// diamonds applies the K4 and diamond changes of update; span is
// d(u) + d(v) in G⁻.
func (c *Counter) diamonds(u, v uint32, span int64, s int64) {
	k := int64(len(c.common))
	var atU, atV, inside int64
	for _, r := range c.common {
		fr := &c.four[r]
		fr.dd2 += s * (k - 1)
		var kr int64
		if c.nodes[r].deg <= containsRatio*span {
			for _, o := range c.adj[r].nbr {
				b := c.bits(o)
				if b == 0 {
					continue
				}
				if b&inV != 0 {
					c.four[o].dd2 += s
					atU++
				}
				if b&inU != 0 {
					c.four[o].dd2 += s
					atV++
				}
				if b == both {
					kr++
				}
			}
		} else {
			for _, o := range c.adj[u].nbr {
				if o != v && c.has(r, o) {
					c.four[o].dd2 += s
					atV++
					if c.bits(o)&inV != 0 {
						kr++
					}
				}
			}
			for _, o := range c.adj[v].nbr {
				if o != u && c.has(r, o) {
					c.four[o].dd2 += s
					atU++
				}
			}
		}
		fr.k4 += s * kr
		inside += kr
	}
	c.four[u].dd2 += s * atU
	c.four[v].dd2 += s * atV
	c.four[u].k4 += s * inside / 2
	c.four[v].k4 += s * inside / 2
}

// cycles counts the 4-cycles x–other–b–a–x of G⁻ from x's side: a ∈
// N(x)\{other}, b ∈ N(a) set in marks[want] (b ∈ N(other)\{x}); dOther is
// d(other) in G⁻. It moves cyc(a) and cyc(b) by s per cycle and returns
// the number of cycles.
func (c *Counter) cycles(x, other uint32, want int, dOther int64, s int64) int64 {
	var total int64
	mark := c.marks[want]
	for _, a := range c.adj[x].nbr {
		if a == other {
			continue
		}
		var m int64
		if c.nodes[a].deg > containsRatio*dOther {
			for _, b := range c.adj[other].nbr {
				if b != x && c.has(a, b) {
					c.four[b].cyc += s
					m++
				}
			}
		} else {
			for _, b := range c.adj[a].nbr {
				if mark[b>>6]>>(b&63)&1 != 0 {
					c.four[b].cyc += s
					m++
				}
			}
		}
		c.four[a].cyc += s * m
		total += m
	}
	return total
}
