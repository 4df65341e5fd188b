// Package conformance is the stream-replay suite every incremental orbit
// counter of orbitwatch runs. Run replays seeded random edge-event streams
// of several shapes (insert-heavy, delete-heavy, repeated pairs, hubs,
// delete everything and rebuild; for directed kinds also reciprocal pairs,
// one-direction removes and hubs that mostly pay or mostly receive), with
// rejected events (self-loops, removes of absent edges) interleaved, and
// at every checkpoint demands that the accumulated incremental vectors,
// the subject's own static recount and delta/brute agree on every node and
// orbit. Outside references check the same vectors: networkx degree and
// triangles (undirected) or triadic census (directed) at every checkpoint,
// igraph motif censuses on final graphs, and a stream of networkx's karate
// club graph (undirected).
//
// Signed kinds run every undirected shape with signs drawn, an
// all-positive stream, sign flips of present pairs, removes of one sign
// while the other keeps the pair, and a hub of disputes; rejected events
// include removes of a sign whose multiplicity is zero while the other
// sign keeps the edge. Events go through delta.ApplySigned, so a sign flip
// reaches the counter as a Delete and an Insert. Their outside references
// are networkx's positive and negative degrees and balanced and
// unbalanced triangles per node (Heider 1946; Cartwright & Harary 1956)
// from networkx.enumerate_all_cliques, igraph's motif census of the graph
// without its signs against the signed graphlets summed by unsigned
// graphlet, and, at every checkpoint, the undirected brute count of the
// graph without its signs against the signed orbits summed by unsigned
// orbit (with every sign positive, the signed counts are the undirected
// ones).
//
// It needs Python 3 with networkx and igraph (see delta/internal/pyref);
// without them the suite fails, it never skips.
//
// It is for tests of engines, not a benchmark and not a production path.
package conformance
