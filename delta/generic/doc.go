// Package generic counts graphlet orbits for any graph kind and graphlet
// size that a catalog.Catalog describes (undirected 2–5 nodes, directed and
// signed 2–4 nodes), by enumerating node sets rather than by kind-specific
// formulas.
//
// It offers three things:
//
//   - NewEnumerator: the reference incremental Engine. For a changed edge or
//     arc uv it visits every node set S ∋ u,v with |S| ≤ k that is (weakly)
//     connected with uv present, each exactly once, by the ESU extension
//     (Wernicke 2006) seeded with {u,v}, and emits the orbit changes of S's
//     members between the induced subgraphs without and with uv, one
//     emit per member whose orbit changes, per set.
//   - NewEngine: the engine to use. The same visit order, but the changes of
//     members that stay while S grows are summed and emitted once per event,
//     the last position is settled per distinct code, and for k = 4 the
//     sets {u,v,a,b} with a, b both next to {u,v} and not to each other are
//     counted per adjacency class instead of visited (degree arithmetic).
//   - NewRecounter: a static recount by rooted ESU enumeration of every
//     connected set, the roots shared among all cores.
//
// Directed graphs count weakly connected graphlets; an arc u→v changes
// alone, and v→u, when present, is part of the induced subgraph on both
// sides of the change, so a reciprocal pair appears or dissolves. Signed
// graphs carry each edge's sign in the code; the engines are
// delta.SignedEngines (InsertSigned adds a negative edge), and a sign flip
// is a delete and an insert.
//
// It is not the fastest path for undirected 2–4 node counts (delta/undirected
// has the orbit equations; BenchmarkUndirected4 runs both on one graph) and
// not the simplest reference (delta/brute); it does no I/O and keeps no
// state between events beyond scratch buffers.
package generic
