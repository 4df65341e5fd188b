package factored

import "orbitwatch/delta"

// Vector appends node x's exact orbit vector (NumOrbits counts) to dst[:0]
// and returns it. g must be the graph the Counter's events have built.
// It reads x's own quantities and, for each y ∈ N(x), d(y), s1(y), t(y) and
// tri(x,y): O(d(x)) work, no allocation when dst has room. With d = d(x),
// t = t(x), far = s1(x) − d and sums over y ∈ N(x), the non-induced
// pattern counts at x are
//
//	N0 = d, N1 = far (3-path ends), N2 = C(d,2), N3 = t
//	N4  = Σ (s1(y) − d(y)) − d(d−1) − 2t          (4-path ends x–y–z–w: w ∈ N(z)\{y}, minus w = x once per triangle edge)
//	N5  = (d−1)·far − 2t                           (4-path middles y–x–z–w, minus w = y)
//	N6  = Σ C(d(y)−1, 2), N7 = C(d,3)              (3-star leaf, centre)
//	N8  = cyc(x), N12 = dd2(x), N14 = k4(x)        (maintained)
//	N9  = Σ t(y) − 2t                              (triangle hanging from a neighbour, not at x)
//	N10 = Σ tri(x,y)·(d(y)−2), N11 = t·(d−2)       (tailed triangle, x of degree 2 or 3)
//	N13 = Σ C(tri(x,y), 2)                         (diamond, x of degree 3)
//
// and solve turns them into induced counts. Vector does not modify c:
// reads may run concurrently with each other, not with an update. g is the
// graph the events have built; the counts come from c's own adjacency.
func (c *Counter) Vector(g *delta.Graph, x uint32, dst []uint64) []uint64 {
	dst = append(dst[:0], make([]uint64, c.orbits)...)
	if int(x) >= len(c.nodes) {
		return dst
	}
	nx := &c.nodes[x]
	d, t := nx.deg, nx.tri
	far := nx.s1 - d
	var n [maxOrbits]int64
	n[0], n[1], n[2], n[3] = d, far, d*(d-1)/2, t
	if c.maxNodes == 4 {
		c.fourNode(x, n[:])
	}
	c.eq.solve(n[:c.orbits], x)
	for i := range dst {
		dst[i] = uint64(n[i])
	}
	return dst
}

// fourNode fills n[4..14] as Vector documents.
func (c *Counter) fourNode(x uint32, n []int64) {
	nx := &c.nodes[x]
	d, t := nx.deg, nx.tri
	var leaf, path, tails, tail2, dia3 int64
	a := &c.adj[x]
	for i, y := range a.nbr {
		ny := &c.nodes[y]
		dy, e := ny.deg, int64(a.tri[i])
		leaf += (dy - 1) * (dy - 2) / 2
		path += ny.s1 - dy
		tails += ny.tri
		tail2 += e * (dy - 2)
		dia3 += e * (e - 1) / 2
	}
	n[4] = path - d*(d-1) - 2*t
	n[5] = (d-1)*(nx.s1-d) - 2*t
	n[6] = leaf
	n[7] = d * (d - 1) * (d - 2) / 6
	fx := &c.four[x]
	n[8] = fx.cyc
	n[9] = tails - 2*t
	n[10] = tail2
	n[11] = t * (d - 2)
	n[12] = fx.dd2
	n[13] = dia3
	n[14] = fx.k4
}
