// Package generic counts graphlet orbits for any graph kind and graphlet
// size that a catalog.Catalog describes (undirected 2–5 nodes, directed 2–4
// nodes), by enumerating node sets rather than by kind-specific formulas.
//
// It offers three things:
//
//   - NewEnumerator: the reference incremental Engine. For a changed edge or
//     arc uv it visits every node set S ∋ u,v with |S| ≤ k that is (weakly)
//     connected with uv present, each exactly once, by an extension of the
//     ESU algorithm (Wernicke 2006) seeded with {u,v}, and emits the orbit
//     changes of S's members between the induced subgraphs with and without
//     uv.
//   - NewEngine: the engine to use. For k = 4 it replaces the visit of the
//     4-node sets {u,v,a,b} with a, b both next to {u,v} but not to each other
//     by counting such pairs per adjacency class (degree arithmetic); other
//     sizes use the enumerator.
//   - NewRecounter: a static recount by rooted ESU enumeration of all
//     connected sets, split by root across all cores.
//
// It is not the fastest path for undirected 2–4 node counts (delta/undirected
// has the orbit equations) and not the simplest reference (delta/brute); it
// does no I/O and keeps no state between events beyond scratch buffers.
package generic
