package undirected

import (
	"math/rand/v2"

	"orbitwatch/delta"
)

// barabasiAlbert returns a seeded preferential-attachment graph: it starts
// from a clique on m+1 nodes and attaches every later node to m distinct
// earlier nodes drawn with probability proportional to degree (by picking a
// uniform endpoint of the edge list).
func barabasiAlbert(rng *rand.Rand, n, m int) *delta.Graph {
	g := delta.NewGraph(delta.Undirected)
	g.Grow(n)
	ends := make([]uint32, 0, 2*n*m)
	for u := range uint32(m + 1) {
		for v := range u {
			g.Link(u, v)
			ends = append(ends, u, v)
		}
	}
	picked := make([]uint32, 0, m)
	for x := uint32(m + 1); x < uint32(n); x++ {
		picked = picked[:0]
		for len(picked) < m {
			y := ends[rng.IntN(len(ends))]
			if !g.HasEdge(x, y) {
				g.Link(x, y)
				picked = append(picked, y)
			}
		}
		for _, y := range picked {
			ends = append(ends, x, y)
		}
	}
	return g
}
