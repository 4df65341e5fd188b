package gen

import "fmt"

// Uniform returns the edges of a uniform random graph G(n, M) (Erdős &
// Rényi 1959) on n nodes with M = m·n distinct edges, drawn one by one
// uniformly among the absent pairs: a graph without hubs, where degrees
// stay near 2m, to set beside the Barabási–Albert graphs with the same
// edge count.
//
// Preconditions: m ≥ 1 and n > 2m+1 (so the graph is far from complete);
// otherwise Uniform panics.
func Uniform(n, m int, seed uint64) []Edge {
	if m < 1 || n <= 2*m+1 {
		panic(fmt.Sprintf("gen: Uniform needs m >= 1 and n > 2m+1, got n=%d m=%d", n, m))
	}
	r := newRand(seed)
	edges := make([]Edge, 0, m*n)
	seen := make(map[uint64]bool, m*n)
	for len(edges) < m*n {
		u, v := uint32(r.IntN(n)), uint32(r.IntN(n))
		if u == v {
			continue
		}
		key := uint64(min(u, v))<<32 | uint64(max(u, v))
		if seen[key] {
			continue
		}
		seen[key] = true
		edges = append(edges, Edge{u, v})
	}
	return edges
}
