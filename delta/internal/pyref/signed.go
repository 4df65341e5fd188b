package pyref

// SignedTriangles adds, for each node 0..n−1 of a signed graph, networkx's
// view of it: [positive degree, negative degree, balanced triangles,
// unbalanced triangles] (triangles from networkx.enumerate_all_cliques,
// balanced when they hold an even number of negative edges).
func (b *Batch) SignedTriangles(g Graph) *[][4]uint64 {
	out := new([][4]uint64)
	b.Call("signed_triangles", map[string]any{"graph": g}, out)
	return out
}
