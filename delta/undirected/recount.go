package undirected

import (
	"fmt"

	"orbitwatch/delta"
)

type recounter struct{ maxNodes, orbits int }

// NewRecounter returns a static recount of orbits on 2..maxNodes nodes
// (maxNodes 2, 3 or 4). It runs in O(Σ_x deg(x)²) time on
// runtime.GOMAXPROCS goroutines plus a K4 enumeration over a degree
// orientation; the result does not depend on the number of goroutines.
func NewRecounter(maxNodes int) delta.Recounter {
	return &recounter{maxNodes: maxNodes, orbits: numOrbits(maxNodes)}
}

// Recount returns every node's orbit vector. g must be Undirected.
func (r *recounter) Recount(g *delta.Graph) *delta.Vectors {
	checkKind(g)
	c := newCSR(g)
	n := c.numNodes()
	vec := delta.NewVectors(n, r.orbits)
	if r.maxNodes == 2 {
		for x := range n {
			vec.Set(uint32(x), oEdge, uint64(c.deg(uint32(x))))
		}
		return vec
	}
	tri, t := edgeTriangles(c)
	var k4 []uint64
	if r.maxNodes == 4 {
		k4 = cliques(c)
	}
	marks := make([][]uint32, workers())
	common := make([][]uint32, workers())
	touched := make([][]uint32, workers())
	forEachNode(n, func(w int, x uint32) {
		if r.maxNodes == 3 {
			o := smallOrbits(c, t, x)
			copy(vec.Row(x), o[:])
			return
		}
		q := localCounts(c, tri, t, x, scratch(marks, w, n), scratch(common, w, n), &touched[w])
		o := solve(&q, int64(k4[x]))
		row := vec.Row(x)
		for i, v := range o {
			if v < 0 {
				panic(fmt.Sprintf("undirected: negative orbit %d count %d at node %d", i, v, x))
			}
			row[i] = uint64(v)
		}
	})
	return vec
}

// edgeTriangles returns tri, aligned with c.adj, where tri[i] for the entry
// y of x's row is |N(x) ∩ N(y)|, the triangles on edge xy, and t[x], the
// triangles at x: t(x) = ½ Σ_{y∈N(x)} tri(x,y).
func edgeTriangles(c *csr) (tri []uint32, t []uint64) {
	n := c.numNodes()
	tri = make([]uint32, len(c.adj))
	t = make([]uint64, n)
	marks := make([][]uint32, workers())
	forEachNode(n, func(w int, x uint32) {
		mark := scratch(marks, w, n)
		for _, y := range c.nbrs(x) {
			mark[y] = x + 1
		}
		var sum uint64
		for i := c.off[x]; i < c.off[x+1]; i++ {
			var k uint32
			for _, z := range c.nbrs(c.adj[i]) {
				if mark[z] == x+1 {
					k++
				}
			}
			tri[i] = k
			sum += uint64(k)
		}
		t[x] = sum / 2
		for _, y := range c.nbrs(x) {
			mark[y] = 0
		}
	})
	return tri, t
}

// smallOrbits returns orbits 0–3 of x:
//
//	o0 = d,  o3 = t(x),  o2 = C(d,2) − t(x),
//	o1 = Σ_{y∈N(x)} (d(y) − 1) − 2t(x)
//
// (a 3-path x–y–z with z adjacent to x is a triangle, met once per
// middle y ∈ {y, z}).
func smallOrbits(c *csr, t []uint64, x uint32) [4]uint64 {
	d := uint64(c.deg(x))
	var far uint64
	for _, y := range c.nbrs(x) {
		far += uint64(c.deg(y)) - 1
	}
	return [4]uint64{d, far - 2*t[x], d*(d-1)/2 - t[x], t[x]}
}

// local holds, for one node x, the number of non-induced copies of each
// 4-node pattern with x at a given position (a copy is a subgraph, not
// necessarily induced, on 4 distinct nodes).
type local struct {
	small [4]uint64
	// starCentre = C(d,3): 3-stars centred on x.
	starCentre int64
	// starLeaf = Σ_{y∈N(x)} C(d(y)−1, 2): 3-stars with x a leaf.
	starLeaf int64
	// pathEnd: 3-edge paths x–y–z–w, = Σ_{z≠x} cn(x,z)(d(z)−1) − 2t(x).
	pathEnd int64
	// pathMid: 3-edge paths y–x–z–w, = Σ_{z∈N(x)} (d−1)(d(z)−1) − 2t(x).
	pathMid int64
	// cycle: 4-cycles through x, = Σ_{z≠x} C(cn(x,z), 2).
	cycle int64
	// tailEnd: triangles not at x hanging from a neighbour,
	// = Σ_{y∈N(x)} (t(y) − tri(x,y)).
	tailEnd int64
	// tailDeg3: a triangle at x plus a third neighbour, = t(x)(d−2).
	tailDeg3 int64
	// tailDeg2: a triangle {x,y,z} plus a pendant on y,
	// = Σ_{y∈N(x)} tri(x,y)(d(y)−2).
	tailDeg2 int64
	// diamondDeg3: an edge xy with two common neighbours,
	// = Σ_{y∈N(x)} C(tri(x,y), 2).
	diamondDeg3 int64
	// diamondDeg2: a triangle {x,y,z} plus another common neighbour of
	// y and z, = ½ Σ_{y∈N(x)} Σ_{z∈N(x)∩N(y)} (tri(y,z) − 1).
	diamondDeg2 int64
}

// localCounts fills the non-induced pattern counts of x. mark and common
// are zeroed scratch arrays of length n and are zero again on return;
// cn(x,z) = |N(x) ∩ N(z)| is gathered in common over the 2-hop paths.
func localCounts(c *csr, tri []uint32, t []uint64, x uint32, mark, common []uint32, touched *[]uint32) local {
	var q local
	q.small = smallOrbits(c, t, x)
	d := int64(c.deg(x))
	tx := int64(t[x])
	for _, y := range c.nbrs(x) {
		mark[y] = x + 1
	}
	seen := (*touched)[:0]
	var twice int64 // 2·diamondDeg2
	for i := c.off[x]; i < c.off[x+1]; i++ {
		y := c.adj[i]
		dy := int64(c.deg(y))
		k := int64(tri[i])
		q.starLeaf += (dy - 1) * (dy - 2) / 2
		q.pathMid += (d - 1) * (dy - 1)
		q.tailEnd += int64(t[y]) - k
		q.tailDeg2 += k * (dy - 2)
		q.diamondDeg3 += k * (k - 1) / 2
		for j := c.off[y]; j < c.off[y+1]; j++ {
			z := c.adj[j]
			if z == x {
				continue
			}
			if common[z] == 0 {
				seen = append(seen, z)
			}
			common[z]++
			if mark[z] == x+1 {
				twice += int64(tri[j]) - 1
			}
		}
	}
	for _, z := range seen {
		k := int64(common[z])
		q.pathEnd += k * int64(c.deg(z)-1)
		q.cycle += k * (k - 1) / 2
		common[z] = 0
	}
	*touched = seen
	for _, y := range c.nbrs(x) {
		mark[y] = 0
	}
	q.starCentre = d * (d - 1) * (d - 2) / 6
	q.pathEnd -= 2 * tx
	q.pathMid -= 2 * tx
	q.tailDeg3 = tx * (d - 2)
	q.diamondDeg2 = twice / 2
	return q
}

// solve returns the induced orbit counts 0–14 of a node from its
// non-induced counts q and its K4 count k. Each non-induced count is the
// sum, over the graphlets the node sits in, of the number of copies of the
// pattern inside that graphlet with the node at the pattern's position
// (derived by hand from the definitions, one graphlet at a time):
//
//	starCentre  = o7 + o11 + o13 + o14
//	starLeaf    = o6 + o9 + o10 + 2·o12 + o13 + 3·o14
//	pathEnd     = o4 + 2·o8 + 2·o9 + o10 + 4·o12 + 2·o13 + 6·o14
//	pathMid     = o5 + 2·o8 + o10 + 2·o11 + 2·o12 + 4·o13 + 6·o14
//	cycle       = o8 + o12 + o13 + 3·o14
//	tailEnd     = o9 + 2·o12 + 3·o14
//	tailDeg3    = o11 + 2·o13 + 3·o14
//	tailDeg2    = o10 + 2·o12 + 2·o13 + 6·o14
//	diamondDeg3 = o13 + 3·o14
//	diamondDeg2 = o12 + 3·o14
//
// The system is triangular once o14 is known, solved here top down.
func solve(q *local, k int64) [maxOrbits]int64 {
	var o [maxOrbits]int64
	for i, v := range q.small {
		o[i] = int64(v)
	}
	o[oClique] = k
	o[oDiamondDeg3] = q.diamondDeg3 - 3*k
	o[oDiamondDeg2] = q.diamondDeg2 - 3*k
	o[oCycle] = q.cycle - o[oDiamondDeg2] - o[oDiamondDeg3] - 3*k
	o[oTailDeg3] = q.tailDeg3 - 2*o[oDiamondDeg3] - 3*k
	o[oTailDeg2] = q.tailDeg2 - 2*o[oDiamondDeg2] - 2*o[oDiamondDeg3] - 6*k
	o[oTailEnd] = q.tailEnd - 2*o[oDiamondDeg2] - 3*k
	o[oStarCentre] = q.starCentre - o[oTailDeg3] - o[oDiamondDeg3] - k
	o[oStarLeaf] = q.starLeaf - o[oTailEnd] - o[oTailDeg2] - 2*o[oDiamondDeg2] - o[oDiamondDeg3] - 3*k
	o[oPathEnd4] = q.pathEnd - 2*o[oCycle] - 2*o[oTailEnd] - o[oTailDeg2] - 4*o[oDiamondDeg2] - 2*o[oDiamondDeg3] - 6*k
	o[oPathMid4] = q.pathMid - 2*o[oCycle] - o[oTailDeg2] - 2*o[oTailDeg3] - 2*o[oDiamondDeg2] - 4*o[oDiamondDeg3] - 6*k
	return o
}
