package gdv

import (
	"math"
	"math/bits"

	"orbitwatch/delta/catalog"
)

// Dependencies returns o_i for every orbit i of the catalog: the number of
// distinct orbits (i itself included) that a node in orbit i occupies in
// the connected induced subgraphs of i's graphlet that contain it.
//
// Milenković & Pržulj 2008 (Cancer Informatics 6, "Uncovering biological
// network function via graphlet degree signatures") weight orbit i by how
// many orbits "affect" it; as we recall the paper (from memory, not checked
// against the text), o_i counts the orbits whose counts are implied by a
// count in orbit i: a node on a triangle (orbit 3) also touches two edges
// (orbit 0), so o_3 = 2. We derive that structurally instead of typing a
// table in: for one position p of the orbit, every subset S of the
// graphlet's positions with p ∈ S and |S| ≥ 2 whose induced subgraph is
// connected is classified with catalog.Lookup, and the orbit of p in it is
// collected. Tests hold the result against the values we recall for orbits
// 0–14. The same rule applies unchanged to directed catalogs.
func Dependencies(cat *catalog.Catalog) []int {
	out := make([]int, len(cat.Orbits))
	for i, o := range cat.Orbits {
		g := cat.Graphlets[o.Graphlet]
		p := o.Positions[0]
		seen := map[int]bool{}
		for mask := uint(1); mask < 1<<g.Nodes; mask++ {
			if mask&(1<<p) == 0 || bits.OnesCount(mask) < 2 {
				continue
			}
			if orb := orbitInSubset(cat, g, mask, p); orb >= 0 {
				seen[orb] = true
			}
		}
		out[i] = len(seen)
	}
	return out
}

// orbitInSubset returns the orbit of position p in the subgraph of g
// induced on the positions in mask, or −1 when that subgraph is not
// connected.
func orbitInSubset(cat *catalog.Catalog, g catalog.Graphlet, mask uint, p int) int {
	var local [5]int // graphlet position → position in the sub-tuple
	k := 0
	for q := 0; q < g.Nodes; q++ {
		if mask&(1<<q) != 0 {
			local[q] = k
			k++
		}
	}
	var edges [][2]int
	for _, e := range g.Edges {
		if mask&(1<<e[0]) != 0 && mask&(1<<e[1]) != 0 {
			edges = append(edges, [2]int{local[e[0]], local[e[1]]})
		}
	}
	gid, orbits := cat.Lookup(k, catalog.Code(cat.Kind, edges))
	if gid < 0 {
		return -1
	}
	return int(orbits[local[p]])
}

// Weights returns the orbit weights w_i = 1 − log(o_i)/log(N) of
// Milenković & Pržulj 2008 (as recalled from memory), with o_i from
// Dependencies and N the catalog's orbit count (the paper's N is 73, the
// orbit count of graphlets on 2–5 nodes; using the catalog's own count
// keeps every weight in (0, 1] for the smaller and the directed catalogs).
// Orbits that imply few others weigh more: their counts carry information
// no other orbit carries. A one-orbit catalog gets weight 1.
func Weights(cat *catalog.Catalog) []float64 {
	deps := Dependencies(cat)
	w := make([]float64, len(deps))
	n := float64(len(deps))
	for i, o := range deps {
		if len(deps) == 1 {
			w[i] = 1
			continue
		}
		w[i] = 1 - math.Log(float64(o))/math.Log(n)
		if w[i] <= 0 {
			panic("gdv: an orbit depends on every orbit of the catalog")
		}
	}
	return w
}
