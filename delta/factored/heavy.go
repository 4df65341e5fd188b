package factored

// terms takes out (sign = −1) or puts back (sign = +1) the terms of the
// heavy neighbour sums that involve a node whose own quantities the event
// changes: u and v (degree, triangles, light-degree sum, and the edge uv
// itself while it is present) and every r ∈ W (triangles, and the edge
// triangle counts of r–u and r–v). The light-degree sums of the nodes in W
// are left to lightSums, which moves every neighbour's.
func (c *Counter) terms(u, v uint32, sign int64) {
	if c.maxNodes != 4 {
		return
	}
	c.termsOf(u, sign, true)
	c.termsOf(v, sign, true)
	for _, r := range c.common {
		c.termsOf(r, sign, false)
	}
}

// termsOf moves, for every heavy neighbour h of y, h's sums by sign times
// y's term (withL1: including l1(y) in al).
func (c *Counter) termsOf(y uint32, sign int64, withL1 bool) {
	ny := &c.nodes[y]
	for _, h := range c.heavyN[y] {
		e := int64(*c.adj[y].find(h))
		hs := c.hv[h]
		if withL1 {
			hs.al += sign * ny.l1
		}
		hs.b += sign * choose2(ny.deg-1)
		hs.ct += sign * ny.tri
		hs.dd += sign * e * (ny.deg - 2)
		hs.ee += sign * choose2(e)
		c.touch(h)
	}
}

func choose2(n int64) int64 {
	if n < 2 {
		return 0
	}
	return n * (n - 1) / 2
}

// flip makes x heavy when d ≥ θ and light otherwise, if it is not already.
func (c *Counter) flip(x uint32, d int64) {
	switch want := d >= c.theta; {
	case want && !c.isHeavy(x):
		c.makeHeavy(x)
	case !want && c.isHeavy(x):
		c.makeLight(x)
	}
}

// makeHeavy turns h heavy: its neighbours list it and drop its degree from
// their light-degree sums; for 4 nodes it gets its pair counts and
// neighbour sums, and every pair {h, q} of heavy neighbours of some w
// leaves w's kept 4-cycles and (when h–q is an edge, the chord) diamonds,
// because it is now read from the pair count. It costs O(d(h)·H), H the
// number of heavy neighbours of h's neighbours.
func (c *Counter) makeHeavy(h uint32) {
	dh := c.nodes[h].deg
	hs := &heavy{}
	for it := c.adj[h].runs(); it.next(); {
		for _, w := range it.nbr {
			c.nodes[w].l1 -= dh
			if c.maxNodes == 4 {
				for _, q := range c.heavyN[w] {
					c.hv[q].al -= dh
					c.touch(q)
				}
			}
			c.heavyN[w] = append(c.heavyN[w], h)
			c.touch(w)
		}
	}
	c.hv[h] = hs
	c.touch(h)
	if c.maxNodes != 4 {
		return
	}
	hs.row = map[uint32]uint32{}
	for it := c.adj[h].runs(); it.next(); {
		for _, w := range it.nbr {
			for _, q := range c.heavyN[w] {
				if q != h {
					hs.row[q]++
				}
			}
		}
	}
	for q, n := range hs.row {
		c.hv[q].row[h] = n
		c.touch(q)
	}
	c.movePairs(h, -1)
	for it := c.adj[h].runs(); it.next(); {
		for i, w := range it.nbr {
			nw, e := &c.nodes[w], int64(it.tri[i])
			hs.al += nw.l1
			hs.b += choose2(nw.deg - 1)
			hs.ct += nw.tri
			hs.dd += e * (nw.deg - 2)
			hs.ee += choose2(e)
		}
	}
}

// makeLight turns h light, undoing makeHeavy.
func (c *Counter) makeLight(h uint32) {
	dh := c.nodes[h].deg
	if c.maxNodes == 4 {
		c.movePairs(h, +1)
		for q := range c.hv[h].row {
			delete(c.hv[q].row, h)
			c.touch(q)
		}
	}
	c.hv[h] = nil
	c.touch(h)
	for it := c.adj[h].runs(); it.next(); {
		for _, w := range it.nbr {
			c.heavyN[w] = removeID(c.heavyN[w], h)
			c.nodes[w].l1 += dh
			if c.maxNodes == 4 {
				for _, q := range c.heavyN[w] {
					c.hv[q].al += dh
					c.touch(q)
				}
			}
			c.touch(w)
		}
	}
}

// movePairs moves into (s = +1) or out of (s = −1) the kept 4-cycles and
// diamonds of every neighbour w of h the pairs {h, q}, q another heavy
// neighbour of w: codeg(h,q) − 1 4-cycles, and as many diamonds with w at
// a degree-2 node when h–q is an edge (the chord).
func (c *Counter) movePairs(h uint32, s int64) {
	for it := c.adj[h].runs(); it.next(); {
		for _, w := range it.nbr {
			for _, q := range c.heavyN[w] {
				if q == h {
					continue
				}
				n := c.codeg(h, q) - 1
				c.four[w].cyc += s * n
				if c.linked(h, q) {
					c.four[w].dd2 += s * n
				}
				c.touch(w)
			}
		}
	}
}
