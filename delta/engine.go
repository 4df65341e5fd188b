package delta

import "fmt"

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
// path separate from any Engine, used to verify it. Recounts accept graphs
// whose degrees are at most MaxRecountDegree (CheckRecount says whether g
// is one) and panic on others.
type Recounter interface {
	Recount(g *Graph) *Vectors
}

// MaxRecountDegree bounds the degrees a Recounter accepts: with d ≤ 2^20
// every intermediate sum of the combinatorial recounts (at most d·d_max²)
// fits in int64.
const MaxRecountDegree = 1 << 20

// DegreeError is CheckRecount's error: Node has Degree neighbours, more
// than MaxRecountDegree.
type DegreeError struct {
	Node   uint32
	Degree int
}

func (e *DegreeError) Error() string {
	return fmt.Sprintf("node %d has %d neighbours, above the %d a static recount counts exactly (its sums could overflow)", e.Node, e.Degree, MaxRecountDegree)
}

// CheckRecount returns a *DegreeError for the first node of g whose degree
// is above MaxRecountDegree, or nil when a Recounter can count g.
func CheckRecount(g *Graph) error {
	for u := range uint32(g.NumNodes()) {
		// Out-degree (plus in-degree when directed) bounds the degree
		// without building the union a directed Degree makes.
		bound := g.Out(u).GetCardinality()
		if g.Kind() == Directed {
			bound += g.In(u).GetCardinality()
		}
		if bound <= MaxRecountDegree {
			continue
		}
		if d := g.Degree(u); d > MaxRecountDegree {
			return &DegreeError{Node: u, Degree: d}
		}
	}
	return nil
}
