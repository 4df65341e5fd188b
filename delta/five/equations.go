package five

import (
	"fmt"
	"sync"

	"orbitwatch/delta"
	"orbitwatch/delta/catalog"
)

// Orbit ranges of the undirected 2–5 catalog: the orbits of 2–4 node
// graphlets come first (catalog numbering is by node count), then the 58
// five-node orbits.
const (
	numOrbits = 73
	first5    = 15
	num5      = numOrbits - first5
)

// Roles of a node in the 5-node trees, in which the recount counts
// non-induced copies by formula.
const (
	pathEnd = iota
	pathNext
	pathMiddle
	chairCentre
	chairMiddle
	chairEnd
	chairLeaf
	starCentre
	starLeaf
	numTreeRoles
)

// equations holds what the recount needs from the catalog, all computed
// from it: the overlap matrix of the orbit equations, the orbit of each
// tree role, and for every other 5-node orbit how many times the core
// listing reaches each occurrence.
type equations struct {
	cat     *catalog.Catalog
	overlap [][]int64
	// treeOrbit[r] is the orbit of tree role r (5-path end, …).
	treeOrbit [numTreeRoles]int
	isTree    [numOrbits]bool
	// mult[o] is, for a 5-node orbit o of a graphlet with a cycle, the
	// number of its induced cycles of length 3, 4 and 5: the core
	// listing reaches each occurrence once from each of them.
	mult [numOrbits]uint64
}

var loadEquations = sync.OnceValue(func() *equations {
	cat, err := catalog.New(delta.Undirected, 5)
	if err != nil {
		panic("five: " + err.Error())
	}
	if cat.NumOrbits() != numOrbits {
		panic(fmt.Sprintf("five: catalog has %d orbits, want %d", cat.NumOrbits(), numOrbits))
	}
	e := &equations{cat: cat, overlap: cat.Overlap()}
	for i := range e.treeOrbit {
		e.treeOrbit[i] = -1
	}
	for _, g := range cat.Graphlets {
		if g.Nodes != 5 {
			continue
		}
		adj, deg := shape(g)
		if len(g.Edges) == 4 {
			for p, o := range g.Orbits {
				e.isTree[o] = true
				e.treeOrbit[treeRoleOf(adj, deg, p)] = o
			}
			continue
		}
		m := uint64(inducedCycles(adj))
		for _, o := range g.Orbits {
			e.mult[o] = m
		}
	}
	for r, o := range e.treeOrbit {
		if o < 0 {
			panic(fmt.Sprintf("five: no catalog orbit for tree role %d", r))
		}
	}
	return e
})

// shape returns the adjacency matrix and degrees of a 5-node graphlet.
func shape(g catalog.Graphlet) (adj [5][5]bool, deg [5]int) {
	for _, e := range g.Edges {
		adj[e[0]][e[1]], adj[e[1]][e[0]] = true, true
		deg[e[0]]++
		deg[e[1]]++
	}
	return adj, deg
}

// treeRoleOf names position p of a 5-node tree by degrees: the 5-path
// (maximum degree 2), the chair (3) and the 4-star (4).
func treeRoleOf(adj [5][5]bool, deg [5]int, p int) int {
	maxDeg, nbDeg := 0, 0
	for q := range 5 {
		maxDeg = max(maxDeg, deg[q])
		if adj[p][q] {
			nbDeg = max(nbDeg, deg[q])
		}
	}
	switch {
	case maxDeg == 2 && deg[p] == 1:
		return pathEnd
	case maxDeg == 2 && nbDeg == 2 && hasLeafNeighbour(adj, deg, p):
		return pathNext
	case maxDeg == 2:
		return pathMiddle
	case maxDeg == 3 && deg[p] == 3:
		return chairCentre
	case maxDeg == 3 && deg[p] == 2:
		return chairMiddle
	case maxDeg == 3 && nbDeg == 2:
		return chairEnd
	case maxDeg == 3:
		return chairLeaf
	case deg[p] == 4:
		return starCentre
	}
	return starLeaf
}

func hasLeafNeighbour(adj [5][5]bool, deg [5]int, p int) bool {
	for q := range 5 {
		if adj[p][q] && deg[q] == 1 {
			return true
		}
	}
	return false
}

// inducedCycles counts the node sets of size 3, 4 and 5 whose induced
// subgraph is a cycle.
func inducedCycles(adj [5][5]bool) int {
	n := 0
	for set := 1; set < 1<<5; set++ {
		var nodes []int
		for q := range 5 {
			if set>>q&1 != 0 {
				nodes = append(nodes, q)
			}
		}
		if len(nodes) < 3 {
			continue
		}
		cycle := true
		edges := 0
		for _, a := range nodes {
			d := 0
			for _, b := range nodes {
				if adj[a][b] {
					d++
				}
			}
			cycle = cycle && d == 2
			edges += d
		}
		// Every node of degree 2 and connected: a single cycle. With
		// |S| ≤ 5 two disjoint cycles would need 6 nodes.
		if cycle && edges == 2*len(nodes) {
			n++
		}
	}
	return n
}
