package gen

import (
	"math/rand/v2"
	"slices"
)

// Twin draws from r a connected graph on nodes 0..size−1 (a random tree,
// then up to size more random edges) and a random permutation of its
// nodes: the graph relabelled by perm is an isomorphic twin, whose nodes
// must have the same orbit counts as their images. Tests plant both
// copies in a background to check that similarity finds each node's
// image.
func Twin(r *rand.Rand, size int) (edges [][2]int, perm []int) {
	for i := 1; i < size; i++ {
		edges = append(edges, [2]int{r.IntN(i), i}) // a random tree: connected
	}
	for range size {
		i, j := r.IntN(size), r.IntN(size)
		if i != j && !slices.Contains(edges, [2]int{i, j}) && !slices.Contains(edges, [2]int{j, i}) {
			edges = append(edges, [2]int{i, j})
		}
	}
	return edges, r.Perm(size)
}
