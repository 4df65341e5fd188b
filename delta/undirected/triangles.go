package undirected

import (
	"slices"
	"sync/atomic"
)

// edgeTriangles returns tri, aligned with c.adj, where tri[i] for the entry
// y of x's row is |N(x) ∩ N(y)|, the triangles on edge xy, and t[x], the
// triangles at x: t(x) = ½ Σ_{y∈N(x)} tri(x,y). Each triangle x < y < z is
// found once, from x, and counted on its three edges at their lower ends;
// the entries at the upper ends are then copied.
func edgeTriangles(c *csr) (tri []uint32, t []int64) {
	n := c.numNodes()
	tri = make([]uint32, len(c.adj))
	t = make([]int64, n)
	forEachNode(n, func(_ int, x uint32) {
		forEachTriangle(c, x, func(i, p, q int) {
			atomic.AddUint32(&tri[i], 1)
			atomic.AddUint32(&tri[p], 1)
			atomic.AddUint32(&tri[q], 1)
		})
	})
	forEachNode(n, func(_ int, x uint32) {
		for i := c.off[x]; i < c.up[x]; i++ {
			y := c.adj[i]
			j, _ := slices.BinarySearch(c.above(y), x)
			tri[i] = tri[c.up[y]+j]
		}
		var sum int64
		for _, k := range tri[c.off[x]:c.off[x+1]] {
			sum += int64(k)
		}
		t[x] = sum / 2
	})
	return tri, t
}

// forEachTriangle calls f(i, p, q) for every triangle x < y < z whose
// lowest node is x, with i, p and q the entries of y in x's row, of z in
// x's row and of z in y's row.
func forEachTriangle(c *csr, x uint32, f func(i, p, q int)) {
	for i := c.up[x]; i < c.off[x+1]; i++ {
		y := c.adj[i]
		// z above y in both rows: x's entries after i, y's upper part.
		p, q := i+1, c.up[y]
		for p < c.off[x+1] && q < c.off[y+1] {
			switch a, b := c.adj[p], c.adj[q]; {
			case a < b:
				p++
			case a > b:
				q++
			default:
				f(i, p, q)
				p++
				q++
			}
		}
	}
}

// triangleSums visits every triangle x < y < z once and returns, per node,
// dd2(x) = Σ over triangles {x,y,z} at x of (tri(y,z) − 1) — a triangle plus
// another common neighbour of the two far corners, the non-induced diamond
// with x at degree 2 — and k4(x), the K4s at x. A K4 x < y < z < q is found
// once, at the triangle x, y, q, as the earlier triangle x, y, z with z
// adjacent to q.
func triangleSums(c *csr, tri []uint32) (dd2, k4 []int64) {
	n := c.numNodes()
	dd2Parts := make([][]int64, workers())
	k4Parts := make([][]int64, workers())
	common := make([][]uint32, workers())
	forEachNode(n, func(w int, x uint32) {
		d2 := scratch(dd2Parts, w, n)
		k := scratch(k4Parts, w, n)
		zs := common[w][:0]
		last := -1
		forEachTriangle(c, x, func(i, p, q int) {
			y, z := c.adj[i], c.adj[p]
			d2[x] += int64(tri[q]) - 1
			d2[y] += int64(tri[p]) - 1
			d2[z] += int64(tri[i]) - 1
			if i != last {
				zs, last = zs[:0], i
			}
			// zs holds the z met so far with this y, all below z.
			for _, low := range zs {
				if _, ok := slices.BinarySearch(c.above(low), z); ok {
					k[x]++
					k[y]++
					k[low]++
					k[z]++
				}
			}
			zs = append(zs, z)
		})
		common[w] = zs
	})
	return sumParts(dd2Parts, n), sumParts(k4Parts, n)
}

// cycles returns the non-induced 4-cycles through every node,
// Σ_{z≠x} C(cn(x,z), 2). Each cycle is found once from its top node x (the
// highest): the wedges x–y–z with y, z below x are counted per z, a pair
// of wedges to the same z is a cycle, credited to x, z and both middles
// (a middle y of wedge x–y–z closes cn(z) − 1 cycles). The work is
// Σ_x Σ_{y∈N(x), y<x} |N(y) ∩ [0,x)|, the bound of Chiba & Nishizeki 1985.
func cycles(c *csr) []int64 {
	n := c.numNodes()
	parts := make([][]int64, workers())
	counts := make([][]uint32, workers())
	touched := make([][]uint32, workers())
	forEachNode(n, func(w int, x uint32) {
		cy := scratch(parts, w, n)
		cn := scratch(counts, w, n)
		seen := touched[w][:0]
		for _, y := range c.below(x) {
			for _, z := range c.nbrs(y) {
				if z >= x {
					break
				}
				if cn[z] == 0 {
					seen = append(seen, z)
				}
				cn[z]++
			}
		}
		for _, z := range seen {
			k := int64(cn[z])
			cy[x] += k * (k - 1) / 2
			cy[z] += k * (k - 1) / 2
		}
		for _, y := range c.below(x) {
			for _, z := range c.nbrs(y) {
				if z >= x {
					break
				}
				cy[y] += int64(cn[z]) - 1
			}
		}
		for _, z := range seen {
			cn[z] = 0
		}
		touched[w] = seen
	})
	return sumParts(parts, n)
}
