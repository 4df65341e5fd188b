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
// It needs Python 3 with networkx and igraph (see delta/internal/pyref);
// without them the suite fails, it never skips.
//
// It is for tests of engines, not a benchmark and not a production path.
package conformance
