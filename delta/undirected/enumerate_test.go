package undirected

import (
	"orbitwatch/delta"
)

// enumerate is the test-only brute force: it visits every 3- and 4-node
// set, classifies its induced subgraph by edge count and degrees, and
// counts each node's orbit. Degree patterns of the connected graphlets
// (hand-derived from the definitions, Pržulj 2007 numbering):
//
//	3 nodes: 2 edges = 3-path (deg 1 → o1, deg 2 → o2); 3 edges = triangle (o3)
//	4 nodes: 3 edges, degrees 1,1,2,2 = 4-path (o4, o5);
//	         3 edges, degrees 3,1,1,1 = 3-star (leaf o6, centre o7);
//	         4 edges, all degree 2 = 4-cycle (o8);
//	         4 edges, degrees 1,2,2,3 = tailed triangle (o9, o10, o11);
//	         5 edges = diamond (deg 2 → o12, deg 3 → o13); 6 edges = K4 (o14).
//
// On 4 nodes, 3 edges with an isolated node (a triangle) or fewer than 3
// edges is disconnected; 4 or more edges always connect them.
func enumerate(g *delta.Graph, maxNodes int) *delta.Vectors {
	n := g.NumNodes()
	vec := delta.NewVectors(n, numOrbits(maxNodes))
	adj := func(a, b int) bool { return g.HasEdge(uint32(a), uint32(b)) }
	for x := range n {
		vec.Set(uint32(x), oEdge, uint64(g.Degree(uint32(x))))
	}
	if maxNodes < 3 {
		return vec
	}
	bump := func(x, o int) { vec.Set(uint32(x), o, vec.Get(uint32(x), o)+1) }
	for i := 0; i < n; i++ {
		for j := i + 1; j < n; j++ {
			for k := j + 1; k < n; k++ {
				s := []int{i, j, k}
				deg, m := degreesIn(s, adj)
				if m == 3 {
					for _, x := range s {
						bump(x, oTriangle)
					}
				} else if m == 2 {
					for p, x := range s {
						bump(x, map[int]int{1: oPathEnd3, 2: oPathMid3}[deg[p]])
					}
				}
				if maxNodes < 4 {
					continue
				}
				for l := k + 1; l < n; l++ {
					s4 := []int{i, j, k, l}
					deg, m := degreesIn(s4, adj)
					for p, x := range s4 {
						if o, ok := orbit4(deg, m, deg[p]); ok {
							bump(x, o)
						}
					}
				}
			}
		}
	}
	return vec
}

func degreesIn(s []int, adj func(a, b int) bool) (deg []int, m int) {
	deg = make([]int, len(s))
	for p := range s {
		for q := p + 1; q < len(s); q++ {
			if adj(s[p], s[q]) {
				deg[p]++
				deg[q]++
				m++
			}
		}
	}
	return deg, m
}

// orbit4 returns the orbit of a node of degree d in a 4-node induced
// subgraph with degrees deg and m edges, and false if it is disconnected.
func orbit4(deg []int, m, d int) (int, bool) {
	for _, k := range deg {
		if k == 0 {
			return 0, false
		}
	}
	maxDeg := 0
	for _, k := range deg {
		maxDeg = max(maxDeg, k)
	}
	switch {
	case m == 3 && maxDeg == 2:
		return map[int]int{1: oPathEnd4, 2: oPathMid4}[d], true
	case m == 3:
		return map[int]int{1: oStarLeaf, 3: oStarCentre}[d], true
	case m == 4 && maxDeg == 2:
		return oCycle, true
	case m == 4:
		return map[int]int{1: oTailEnd, 2: oTailDeg2, 3: oTailDeg3}[d], true
	case m == 5:
		return map[int]int{2: oDiamondDeg2, 3: oDiamondDeg3}[d], true
	case m == 6:
		return oClique, true
	}
	return 0, false
}
