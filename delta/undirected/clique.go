package undirected

// cliques returns the number of K4s at every node. Each K4 is found once,
// from its lowest node in the order (degree, id): with out(x) the
// neighbours above x, a K4 a<b<c<d is the pair b ∈ out(a) with c, d in
// out(a) ∩ out(b) adjacent to each other. Out-lists stay short on skewed graphs,
// so the cost is far below Σ deg².
func cliques(c *csr) []uint64 {
	n := c.numNodes()
	up := orient(c)
	parts := make([][]uint64, workers())
	both := make([][]uint32, workers())
	forEachNode(n, func(w int, x uint32) {
		k4 := scratch(parts, w, n)
		for _, y := range up.nbrs(x) {
			common := intersect(both[w][:0], up.nbrs(x), up.nbrs(y))
			both[w] = common
			for i, z := range common {
				var m uint64
				for _, q := range common[i+1:] {
					// common is ascending by id, not by order, so
					// the edge zq may point either way.
					if contains(up.nbrs(z), q) || contains(up.nbrs(q), z) {
						m++
						k4[q]++
					}
				}
				k4[z] += m
				k4[x] += m
				k4[y] += m
			}
		}
	})
	k4 := make([]uint64, n)
	for _, p := range parts {
		for i, v := range p {
			k4[i] += v
		}
	}
	return k4
}

// orient returns the out-lists of the orientation x→y when
// (deg x, x) < (deg y, y), each ascending by id.
func orient(c *csr) *csr {
	n := c.numNodes()
	above := func(x, y uint32) bool {
		dx, dy := c.deg(x), c.deg(y)
		return dx < dy || (dx == dy && x < y)
	}
	up := &csr{off: make([]int, n+1)}
	for x := range uint32(n) {
		k := 0
		for _, y := range c.nbrs(x) {
			if above(x, y) {
				k++
			}
		}
		up.off[x+1] = up.off[x] + k
	}
	up.adj = make([]uint32, up.off[n])
	forEachNode(n, func(_ int, x uint32) {
		// out has room for exactly x's entries, so append fills them in place.
		out := up.adj[up.off[x]:up.off[x]]
		for _, y := range c.nbrs(x) {
			if above(x, y) {
				out = append(out, y)
			}
		}
	})
	return up
}

// intersect appends a ∩ b to dst; a and b are ascending.
func intersect(dst, a, b []uint32) []uint32 {
	i, j := 0, 0
	for i < len(a) && j < len(b) {
		switch {
		case a[i] < b[j]:
			i++
		case a[i] > b[j]:
			j++
		default:
			dst = append(dst, a[i])
			i++
			j++
		}
	}
	return dst
}

// contains reports whether ascending s holds v.
func contains(s []uint32, v uint32) bool {
	lo, hi := 0, len(s)
	for lo < hi {
		m := int(uint(lo+hi) >> 1)
		if s[m] < v {
			lo = m + 1
		} else {
			hi = m
		}
	}
	return lo < len(s) && s[lo] == v
}
