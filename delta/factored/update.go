package factored

// containsRatio: a walk of a list of length n testing membership in
// another is replaced by a walk of the other when n exceeds it by more than
// this factor (a marked-bit test is cheaper than a binary search).
const containsRatio = 8

// update applies the local changes of inserting (s = +1) or deleting
// (s = −1) the edge uv. Every count below is taken in G⁻, the graph
// without uv (the adjacency, degrees, heavy lists and pair counts are in
// G⁻ when it runs). With A = N(u), B = N(v) and W = A ∩ B:
//
//	t(u), t(v) ±|W|, t(r) ±1 for r ∈ W
//	l1(z) ±1 for z ∈ A when u is light, l1(v) ±(d(u)+1); the same with u, v swapped
//	K4s: k4(r) ±|N(r) ∩ W| for r ∈ W, k4(u), k4(v) ±e(W)
//	diamonds (x at a degree-2 node): with uv the chord, dd2(r) ±(|W|−1)
//	  for r ∈ W; with u–v a side edge and v–r the chord (r ∈ W), dd2(u)
//	  and dd2(o) ±1 per o ∈ N(v) ∩ N(r); the same with u and v swapped
//	4-cycles x–y–b–a ({x,y} = {u,v}, a ∈ N(x), b ∈ N(y) ∩ N(a)): the
//	  pair {y, a} is seen by x and b, the pair {x, b} by y and a
//
// where a diamond whose chord, or a 4-cycle pair, is two heavy nodes is
// not kept but read from the heavy pair counts, and the heavy nodes'
// light-degree sums follow l1. The work is d(x) marks at a light
// endpoint, Σ_{r∈W} min(d(r), |W|) for K4s and diamonds, and
// Σ_{a∈N(x)} min(d(a), d(y)) from the lighter endpoint x for 4-cycles,
// with hub lists searched, never walked.
func (c *Counter) update(u, v uint32, s int64) {
	c.markSide(u, 0)
	c.markSide(v, 1)
	k := int64(len(c.common))
	for _, x := range [2]uint32{u, v} {
		c.nodes[x].tri += s * k
	}
	for _, r := range c.common {
		c.nodes[r].tri += s
		c.touch(r)
	}
	c.lightSums(u, v, s)
	c.lightSums(v, u, s)
	if c.maxNodes == 4 {
		c.cliques(u, v, s)
		c.diamonds(u, v, s)
		c.diamonds(v, u, s)
		if c.nodes[u].deg <= c.nodes[v].deg {
			c.cycles(u, v, 1, s)
		} else {
			c.cycles(v, u, 0, s)
		}
	}
	c.unmark(u, 0)
	c.unmark(v, 1)
}

// markSide marks N(x) in marks[side] when x is light.
func (c *Counter) markSide(x uint32, side int) {
	if c.isHeavy(x) {
		return
	}
	m := c.marks[side]
	for it := c.adj[x].runs(); it.next(); {
		for _, y := range it.nbr {
			m[y>>6] |= 1 << (y & 63)
		}
	}
}

func (c *Counter) unmark(x uint32, side int) {
	if c.isHeavy(x) {
		return
	}
	m := c.marks[side]
	for it := c.adj[x].runs(); it.next(); {
		for _, y := range it.nbr {
			m[y>>6] = 0
		}
	}
}

// in reports whether z ∈ N(x), x being the endpoint on side.
func (c *Counter) in(x uint32, side int, z uint32) bool {
	if !c.isHeavy(x) {
		return c.marks[side][z>>6]>>(z&63)&1 != 0
	}
	return c.linked(x, z)
}

// lightSums moves the light-degree sums for x's degree change when x is
// light: l1 of every z ∈ N(x) by s and of the other endpoint by s·(d(x)+1)
// (its new neighbour's degree in G), and al of the heavy neighbours of
// each z ∈ N(x). The other endpoint's own heavy neighbours hear of its l1
// through terms.
func (c *Counter) lightSums(x, other uint32, s int64) {
	if c.isHeavy(x) {
		return
	}
	for it := c.adj[x].runs(); it.next(); {
		for _, z := range it.nbr {
			c.nodes[z].l1 += s
			if c.maxNodes == 4 {
				for _, h := range c.heavyN[z] {
					c.hv[h].al += s
					c.touch(h)
				}
			}
			if c.isHeavy(z) {
				c.touch(z)
			}
		}
	}
	c.nodes[other].l1 += s * (c.nodes[x].deg + 1)
	c.touch(other)
}

// cliques applies the K4 changes (the edges inside W) and the diamonds
// with uv as the chord.
func (c *Counter) cliques(u, v uint32, s int64) {
	k := int64(len(c.common))
	var inside int64
	for _, r := range c.common {
		var kr int64
		a := &c.adj[r]
		if int64(a.size()) <= containsRatio*k {
			for it := a.runs(); it.next(); {
				for _, o := range it.nbr {
					kr += int64(c.inW[o>>6] >> (o & 63) & 1)
				}
			}
		} else {
			for _, o := range c.common {
				if c.linked(r, o) {
					kr++
				}
			}
		}
		if kr != 0 {
			c.four[r].k4 += s * kr
			c.touch(r)
		}
		inside += kr
	}
	c.four[u].k4 += s * inside / 2
	c.four[v].k4 += s * inside / 2
	if len(c.common) > 1 && !(c.isHeavy(u) && c.isHeavy(v)) {
		for _, r := range c.common {
			c.four[r].dd2 += s * (k - 1)
		}
	}
}

// diamonds applies the diamond changes with u–v a side edge at u (a
// degree-2 node) and v–r the chord, r ∈ W: the other degree-2 nodes are
// o ∈ N(v) ∩ N(r), and u ∉ N(v) in G⁻.
func (c *Counter) diamonds(u, v uint32, s int64) {
	var atU int64
	for _, r := range c.common {
		if c.isHeavy(v) && c.isHeavy(r) {
			continue
		}
		atU += c.commonWalk(v, r, func(o uint32) {
			c.four[o].dd2 += s
			c.touch(o)
		})
	}
	c.four[u].dd2 += s * atU
}

// commonWalk calls f for every o ∈ N(p) ∩ N(q) and returns their number,
// walking the shorter list and searching the longer.
func (c *Counter) commonWalk(p, q uint32, f func(o uint32)) int64 {
	if c.adj[p].size() > c.adj[q].size() {
		p, q = q, p
	}
	var n int64
	for it := c.adj[p].runs(); it.next(); {
		for _, o := range it.nbr {
			if c.linked(q, o) {
				f(o)
				n++
			}
		}
	}
	return n
}

// cycles applies the 4-cycle changes from the lighter endpoint x towards
// y (marks on side sy): cycles x–y–b–a with a ∈ N(x) and
// b ∈ N(a) ∩ N(y) (x ∉ N(y) in G⁻, so b ≠ x). A pair of two heavy nodes
// is read from the pair counts, not kept: {y, a} for x and b, {x, b} for
// y and a.
func (c *Counter) cycles(x, y uint32, sy int, s int64) {
	hx, hy := c.isHeavy(x), c.isHeavy(y)
	var atX, atY int64
	for it := c.adj[x].runs(); it.next(); {
		for _, a := range it.nbr {
			if hy && c.isHeavy(a) {
				n := c.codeg(a, y)
				if hx {
					for _, b := range c.heavyN[a] {
						if c.linked(y, b) {
							n--
						}
					}
				}
				if n != 0 {
					atY += n
					c.four[a].cyc += s * n
					c.touch(a)
				}
				continue
			}
			var m, ma int64
			visit := func(b uint32) {
				c.four[b].cyc += s
				c.touch(b)
				m++
				if !(hx && c.isHeavy(b)) {
					ma++
				}
			}
			aa := &c.adj[a]
			if !hy && int64(aa.size()) <= containsRatio*c.nodes[y].deg {
				for jt := aa.runs(); jt.next(); {
					for _, b := range jt.nbr {
						if c.in(y, sy, b) {
							visit(b)
						}
					}
				}
			} else {
				c.commonWalk(a, y, visit)
			}
			atX += m
			atY += ma
			if ma != 0 {
				c.four[a].cyc += s * ma
				c.touch(a)
			}
		}
	}
	c.four[x].cyc += s * atX
	c.four[y].cyc += s * atY
}
