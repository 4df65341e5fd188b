package delta

// Emit receives one orbit change: count (node, orbit) changes by d.
// An engine may emit the same (node, orbit) more than once for one edge;
// the changes add up.
type Emit func(node uint32, orbit int, d int64)

// Engine computes the orbit changes of one simple-graph change.
//
// For an inserted edge uv (G′ = G + uv) the change of count (x, o) is
//
//	Δ(x,o) = Σ over node sets S ∋ u,v, |S| ≤ MaxNodes,
//	         [G′[S] connected, x in orbit o of G′[S]] − [G[S] connected, x in orbit o of G[S]],
//
// and a deletion is the same with G and G′ swapped. Engines look at the halo
// of uv only. They may Link/Unlink g to look at the other side of the
// change but must leave g exactly as they found it. Engines are not safe
// for concurrent use on the same graph.
type Engine interface {
	Kind() Kind
	MaxNodes() int
	NumOrbits() int
	// Insert emits the changes of inserting uv into g; g must not have uv
	// and u != v; both nodes must exist in g.
	Insert(g *Graph, u, v uint32, emit Emit)
	// Delete emits the changes of deleting uv from g; g must have uv.
	Delete(g *Graph, u, v uint32, emit Emit)
}

// SignedEngine is an Engine of a Signed graph. Insert adds a positive
// edge; InsertSigned adds one of the sign neg (the graph lacks the edge,
// so it cannot tell the sign). Delete reads the sign from the graph.
type SignedEngine interface {
	Engine
	InsertSigned(g *Graph, u, v uint32, neg bool, emit Emit)
}

// Recounter computes every node's orbit vector from scratch. It is a code
// path separate from any Engine, used to verify it.
type Recounter interface {
	Recount(g *Graph) *Vectors
}
