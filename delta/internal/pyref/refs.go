package pyref

import (
	"encoding/json"
	"fmt"
	"math"
)

// Motif is one isomorphism class of igraph's motif census
// (Graph.motifs_randesu): the induced-subgraph count of the class, and one
// representative edge list from Graph.Isoclass, so the caller can match
// classes to its own graphlets by isomorphism. Counted is false for the
// classes igraph does not count (the disconnected ones, reported as NaN).
type Motif struct {
	Class   int
	Count   uint64
	Counted bool
	Edges   [][2]int
}

// UnmarshalJSON reads a class as the Python side writes it, with a null
// count for classes igraph does not count.
func (m *Motif) UnmarshalJSON(data []byte) error {
	var raw struct {
		Class int      `json:"class"`
		Count *float64 `json:"count"`
		Edges [][2]int `json:"edges"`
	}
	if err := json.Unmarshal(data, &raw); err != nil {
		return err
	}
	*m = Motif{Class: raw.Class, Edges: raw.Edges}
	if raw.Count != nil {
		if *raw.Count < 0 || *raw.Count != math.Trunc(*raw.Count) || *raw.Count >= 1<<53 {
			return fmt.Errorf("motif class %d: count %v is not an exact non-negative integer", raw.Class, *raw.Count)
		}
		m.Count, m.Counted = uint64(*raw.Count), true
	}
	return nil
}

// Census is networkx.triadic_census on a DiGraph: the count of each of the
// 16 MAN triad types, and for each type a representative arc list over
// nodes 0..2 from networkx.triad_graph, to match types by isomorphism.
type Census struct {
	Counts map[string]uint64   `json:"counts"`
	Triads map[string][][2]int `json:"triads"`
}

// Degrees adds networkx degree of each node 0..n−1 (for a directed graph,
// in-degree plus out-degree).
func (b *Batch) Degrees(g Graph) *[]uint64 {
	out := new([]uint64)
	b.Call("degrees", map[string]any{"graph": g}, out)
	return out
}

// Triangles adds networkx.triangles of each node 0..n−1 of an undirected
// graph.
func (b *Batch) Triangles(g Graph) *[]uint64 {
	out := new([]uint64)
	b.Call("triangles", map[string]any{"graph": g}, out)
	return out
}

// Motifs adds igraph's motif census of size 3 or 4 (directed or undirected
// as g is) or 5 (undirected only; igraph 0.10 has 5-node undirected
// isoclasses). Run fills the slice indexed by igraph class id.
func (b *Batch) Motifs(g Graph, size int) *[]Motif {
	out := new([]Motif)
	b.Call("motifs", map[string]any{"graph": g, "size": size}, out)
	return out
}

// TriadicCensus adds networkx.triadic_census of a directed graph.
func (b *Batch) TriadicCensus(g Graph) *Census {
	out := new(Census)
	b.Call("triadic_census", map[string]any{"graph": g}, out)
	return out
}

// Degrees returns networkx degrees of g's nodes.
func Degrees(g Graph) ([]uint64, error) {
	var b Batch
	r := b.Degrees(g)
	return *r, b.Run()
}

// Triangles returns networkx.triangles of g's nodes.
func Triangles(g Graph) ([]uint64, error) {
	var b Batch
	r := b.Triangles(g)
	return *r, b.Run()
}

// UndirectedMotifs returns igraph's motif census of an undirected graph for
// size 3, 4 or 5.
func UndirectedMotifs(g Graph, size int) ([]Motif, error) {
	if g.Directed {
		panic("pyref: UndirectedMotifs of a directed graph")
	}
	return motifs(g, size)
}

// DirectedMotifs returns igraph's motif census of a directed graph for size
// 3 or 4.
func DirectedMotifs(g Graph, size int) ([]Motif, error) {
	if !g.Directed {
		panic("pyref: DirectedMotifs of an undirected graph")
	}
	return motifs(g, size)
}

func motifs(g Graph, size int) ([]Motif, error) {
	if size != 3 && size != 4 && (size != 5 || g.Directed) {
		panic("pyref: motif size must be 3 or 4, or 5 for undirected graphs")
	}
	var b Batch
	r := b.Motifs(g, size)
	return *r, b.Run()
}

// TriadicCensus returns networkx.triadic_census of a directed graph.
func TriadicCensus(g Graph) (*Census, error) {
	if !g.Directed {
		panic("pyref: TriadicCensus of an undirected graph")
	}
	var b Batch
	r := b.TriadicCensus(g)
	return r, b.Run()
}

// KarateClub returns networkx.karate_club_graph (Zachary 1977): 34 nodes,
// 78 edges, nodes numbered 0..33 as networkx numbers them.
func KarateClub() (Graph, error) {
	var b Batch
	var g Graph
	b.Call("karate_club", nil, &g)
	return g, b.Run()
}
