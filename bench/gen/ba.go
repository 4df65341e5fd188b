package gen

import "fmt"

// Edge is one undirected edge {U, V} or one arc U→V, on dense node ids.
type Edge struct{ U, V uint32 }

// BarabasiAlbert returns the edges of a Barabási–Albert preferential
// attachment graph (Barabási & Albert 1999) on n nodes, each new node
// attaching to m distinct earlier nodes.
//
// It starts from the complete graph on nodes 0..m (m(m+1)/2 edges); node
// t = m+1..n-1 then picks m distinct targets, each drawn uniformly from the
// list of all edge endpoints so far (the repeated-endpoints method: a node
// appears once per incident edge, so it is drawn with probability
// degree/2E). The result has m(m+1)/2 + (n−m−1)·m edges, no self-loops and
// no duplicates; edge i of node t is {t, target} with t > target.
//
// Preconditions: m ≥ 1 and n > m; otherwise BarabasiAlbert panics.
func BarabasiAlbert(n, m int, seed uint64) []Edge {
	if m < 1 || n <= m {
		panic(fmt.Sprintf("gen: BarabasiAlbert needs m >= 1 and n > m, got n=%d m=%d", n, m))
	}
	r := newRand(seed)
	total := m*(m+1)/2 + (n-m-1)*m
	edges := make([]Edge, 0, total)
	ends := make([]uint32, 0, 2*total)
	for u := 0; u <= m; u++ {
		for v := 0; v < u; v++ {
			edges = append(edges, Edge{uint32(u), uint32(v)})
			ends = append(ends, uint32(u), uint32(v))
		}
	}
	picked := make([]uint32, 0, m)
	for t := m + 1; t < n; t++ {
		picked = picked[:0]
		for len(picked) < m {
			w := ends[r.IntN(len(ends))]
			if !containsID(picked, w) {
				picked = append(picked, w)
			}
		}
		for _, w := range picked {
			edges = append(edges, Edge{uint32(t), w})
			ends = append(ends, uint32(t), w)
		}
	}
	return edges
}

func containsID(s []uint32, x uint32) bool {
	for _, y := range s {
		if y == x {
			return true
		}
	}
	return false
}

// MaxNode returns 1 + the largest node id in edges, the node count they
// need; 0 for no edges.
func MaxNode(edges []Edge) int {
	n := 0
	for _, e := range edges {
		n = max(n, int(e.U)+1, int(e.V)+1)
	}
	return n
}
