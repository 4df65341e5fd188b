package factored

import (
	"slices"

	"orbitwatch/delta"
)

// containsRatio: a neighbour walk of a node a (cost d(a), one mark read
// each) is replaced by membership tests of a smaller set in N(a) (cost
// about a bitmap search each) when d(a) exceeds that set's size by more
// than this factor.
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
func (c *Counter) update(g *delta.Graph, u, v uint32, s int64) {
	c.grow(g.NumNodes())
	c.nextEpoch()
	nu, nv := &c.nodes[u], &c.nodes[v]
	du, dv := nu.deg, nv.deg
	if s < 0 {
		du, dv = du-1, dv-1
	}
	costU, costV := nu.s1, nv.s1
	c.common = c.common[:0]
	c.markSide(g, u, v, inU, s)
	c.markSide(g, v, u, inV, s)
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
	if c.maxNodes == 3 {
		return
	}
	c.edgeTriangles(g, u, v, s)
	c.diamonds(g, u, v, du+dv, s)
	var p int64
	if costU <= costV {
		p = c.cycles(g, u, v, inV, dv, s)
	} else {
		p = c.cycles(g, v, u, inU, du, s)
	}
	nu.cyc += s * p
	nv.cyc += s * p
}

// markSide marks N(x)\{other} with bit, moves their neighbour degree sums
// by s and, for the second side, collects the common neighbours.
func (c *Counter) markSide(g *delta.Graph, x, other, bit uint32, s int64) {
	c.outer.each(g, x, other, func(y uint32) {
		c.nodes[y].s1 += s
		b := c.bits(y)
		if bit == inV && b&inU != 0 {
			c.common = append(c.common, y)
		}
		c.mark[y] = c.epoch<<2 | b | bit
	})
}

// edgeTriangles moves tri(u,r), tri(v,r) and their mirrors by s for every
// common neighbour r, then adds (insert) or removes (delete) the entries of
// uv itself. Ranks are those of g as given, which holds uv only on delete,
// so the per-r updates come first on both paths.
func (c *Counter) edgeTriangles(g *delta.Graph, u, v uint32, s int64) {
	d := uint32(s)
	for _, r := range c.common {
		c.addTri(g, u, r, d)
		c.addTri(g, v, r, d)
		c.addTri(g, r, u, d)
		c.addTri(g, r, v, d)
	}
	k := uint32(len(c.common))
	for _, e := range [2][2]uint32{{u, v}, {v, u}} {
		x, y := e[0], e[1]
		i := int(g.Out(x).Rank(y))
		if s > 0 {
			c.edgeTri[x] = slices.Insert(c.edgeTri[x], i, k)
		} else {
			c.edgeTri[x] = slices.Delete(c.edgeTri[x], i-1, i)
		}
	}
}

// addTri adds d (mod 2^32, so ^0 subtracts one) to tri(x,y); y ∈ N(x).
func (c *Counter) addTri(g *delta.Graph, x, y, d uint32) {
	c.edgeTri[x][g.Out(x).Rank(y)-1] += d
}

// diamonds applies the K4 and diamond changes of update; span is
// d(u) + d(v) in G⁻.
func (c *Counter) diamonds(g *delta.Graph, u, v uint32, span int64, s int64) {
	k := int64(len(c.common))
	var atU, atV, inside int64
	for _, r := range c.common {
		nr := &c.nodes[r]
		nr.dd2 += s * (k - 1)
		var kr int64
		if nr.deg <= containsRatio*span {
			w := &c.inner
			w.it.Initialize(g.Out(r))
			for n := w.it.NextMany(w.chunk[:]); n > 0; n = w.it.NextMany(w.chunk[:]) {
				for _, o := range w.chunk[:n] {
					b := c.bits(o)
					if b == 0 {
						continue
					}
					if b&inV != 0 {
						c.nodes[o].dd2 += s
						atU++
					}
					if b&inU != 0 {
						c.nodes[o].dd2 += s
						atV++
					}
					if b == both {
						kr++
					}
				}
			}
		} else {
			nb := g.Out(r)
			c.inner.each(g, u, v, func(o uint32) {
				if nb.Contains(o) {
					c.nodes[o].dd2 += s
					atV++
					if c.bits(o)&inV != 0 {
						kr++
					}
				}
			})
			c.inner.each(g, v, u, func(o uint32) {
				if nb.Contains(o) {
					c.nodes[o].dd2 += s
					atU++
				}
			})
		}
		nr.k4 += s * kr
		inside += kr
	}
	c.nodes[u].dd2 += s * atU
	c.nodes[v].dd2 += s * atV
	c.nodes[u].k4 += s * inside / 2
	c.nodes[v].k4 += s * inside / 2
}

// each calls f for every y ∈ N(x)\{other} in increasing order.
func (w *walker) each(g *delta.Graph, x, other uint32, f func(y uint32)) {
	w.it.Initialize(g.Out(x))
	for n := w.it.NextMany(w.chunk[:]); n > 0; n = w.it.NextMany(w.chunk[:]) {
		for _, y := range w.chunk[:n] {
			if y != other {
				f(y)
			}
		}
	}
}

// cycles counts the 4-cycles x–other–b–a–x of G⁻ from x's side: a ∈
// N(x)\{other}, b ∈ N(a) with mark want (b ∈ N(other)\{x}); dOther is
// d(other) in G⁻. It moves cyc(a) and cyc(b) by s per cycle and returns
// the number of cycles.
func (c *Counter) cycles(g *delta.Graph, x, other, want uint32, dOther int64, s int64) int64 {
	var total int64
	w := &c.outer
	w.it.Initialize(g.Out(x))
	for n := w.it.NextMany(w.chunk[:]); n > 0; n = w.it.NextMany(w.chunk[:]) {
		for _, a := range w.chunk[:n] {
			if a == other {
				continue
			}
			var m int64
			if c.nodes[a].deg > containsRatio*dOther {
				nb := g.Out(a)
				c.inner.each(g, other, x, func(b uint32) {
					if nb.Contains(b) {
						c.nodes[b].cyc += s
						m++
					}
				})
			} else {
				in := &c.inner
				in.it.Initialize(g.Out(a))
				for k := in.it.NextMany(in.chunk[:]); k > 0; k = in.it.NextMany(in.chunk[:]) {
					for _, b := range in.chunk[:k] {
						if c.bits(b)&want != 0 {
							c.nodes[b].cyc += s
							m++
						}
					}
				}
			}
			c.nodes[a].cyc += s * m
			total += m
		}
	}
	return total
}
