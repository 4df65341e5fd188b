package undirected

import (
	"fmt"

	"orbitwatch/delta"
)

type recounter struct{ maxNodes, orbits int }

// NewRecounter returns a static recount of orbits on 2..maxNodes nodes
// (maxNodes 2, 3 or 4). It snapshots the graph into rows relabelled by
// degree, enumerates triangles, K4s and 4-cycles once each from their
// lowest or highest node (which gives every edge's triangle count), and
// solves the orbit equations per node; all passes run on runtime.GOMAXPROCS
// goroutines and the result does not depend on their number.
func NewRecounter(maxNodes int) delta.Recounter {
	return &recounter{maxNodes: maxNodes, orbits: numOrbits(maxNodes)}
}

// Recount returns every node's orbit vector. g must be Undirected with no
// degree above 2^20.
func (r *recounter) Recount(g *delta.Graph) *delta.Vectors {
	checkKind(g)
	c := newCSR(g)
	n := c.numNodes()
	if n > 0 && c.deg(uint32(n-1)) > delta.MaxRecountDegree {
		panic(fmt.Sprintf("undirected: degree %d above 2^20, counts could overflow int64", c.deg(uint32(n-1))))
	}
	vec := delta.NewVectors(n, r.orbits)
	if r.maxNodes == 2 {
		for x := range uint32(n) {
			vec.Set(c.orig[x], oEdge, uint64(c.deg(x)))
		}
		return vec
	}
	tri, t := edgeTriangles(c)
	far := make([]int64, n)
	forEachNode(n, func(_ int, x uint32) {
		for _, y := range c.nbrs(x) {
			far[x] += int64(c.deg(y)) - 1
		}
	})
	if r.maxNodes == 3 {
		forEachNode(n, func(_ int, x uint32) {
			o := smallOrbits(c, t, far, x)
			setRow(vec, c.orig[x], o[:4])
		})
		return vec
	}
	dd2, k4 := triangleSums(c, tri)
	cyc := cycles(c)
	forEachNode(n, func(_ int, x uint32) {
		q := localCounts(c, tri, t, far, x)
		q.cycle, q.diamondDeg2 = cyc[x], dd2[x]
		o := solve(&q, k4[x])
		setRow(vec, c.orig[x], o[:])
	})
	return vec
}

// setRow stores a node's solved counts; a negative one is a bug in the
// equations, not bad input.
func setRow(vec *delta.Vectors, x uint32, o []int64) {
	row := vec.Row(x)
	for i, v := range o {
		if v < 0 {
			panic(fmt.Sprintf("undirected: negative orbit %d count %d at node %d", i, v, x))
		}
		row[i] = uint64(v)
	}
}

// smallOrbits returns orbits 0–3 of x, with far(x) = Σ_{y∈N(x)} (d(y) − 1):
//
//	o0 = d,  o3 = t(x),  o2 = C(d,2) − t(x),  o1 = far(x) − 2t(x)
//
// (a 3-path x–y–z with z adjacent to x is a triangle, met once per
// middle y ∈ {y, z}).
func smallOrbits(c *csr, t, far []int64, x uint32) [maxOrbits]int64 {
	d := int64(c.deg(x))
	return [maxOrbits]int64{d, far[x] - 2*t[x], d*(d-1)/2 - t[x], t[x]}
}

// local holds, for one node x, the number of non-induced copies of each
// 4-node pattern with x at a given position (a copy is a subgraph, not
// necessarily induced, on 4 distinct nodes).
type local struct {
	small [maxOrbits]int64
	// starCentre = C(d,3): 3-stars centred on x.
	starCentre int64
	// starLeaf = Σ_{y∈N(x)} C(d(y)−1, 2): 3-stars with x a leaf.
	starLeaf int64
	// pathEnd: 3-edge paths x–y–z–w, = Σ_{y∈N(x)} (far(y) − (d−1)) − 2t(x):
	// w ranges over N(z) \ {y}, minus w = x, which happens once per
	// triangle edge (y, z).
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

// localCounts fills the non-induced pattern counts of x that its own row
// and its neighbours' degrees, triangles and far sums give; cycle and
// diamondDeg2 come from the enumerations (cycles, triangleSums).
func localCounts(c *csr, tri []uint32, t, far []int64, x uint32) local {
	q := local{small: smallOrbits(c, t, far, x)}
	d := int64(c.deg(x))
	tx := t[x]
	for i := c.off[x]; i < c.off[x+1]; i++ {
		y := c.adj[i]
		dy := int64(c.deg(y))
		k := int64(tri[i])
		q.starLeaf += (dy - 1) * (dy - 2) / 2
		q.pathEnd += far[y] - (d - 1)
		q.pathMid += (d - 1) * (dy - 1)
		q.tailEnd += t[y] - k
		q.tailDeg2 += k * (dy - 2)
		q.diamondDeg3 += k * (k - 1) / 2
	}
	q.starCentre = d * (d - 1) * (d - 2) / 6
	q.pathEnd -= 2 * tx
	q.pathMid -= 2 * tx
	q.tailDeg3 = tx * (d - 2)
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
	o := q.small
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
