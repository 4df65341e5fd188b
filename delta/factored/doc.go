// Package factored keeps the undirected 2–4 node orbit counts of a changing
// graph in factored form: under an edge insertion or deletion it updates
// only quantities whose change is local to the edge (degrees, neighbour
// degree sums, triangles per node and per edge, K4s, non-induced 4-cycles
// and non-induced diamonds per node), and it derives a node's full exact
// orbit vector (Pržulj 2007 numbering, orbits 0–14) on demand from those
// quantities and its neighbours' by the orbit equations: non-induced
// pattern counts solved for induced orbit counts, the approach of Hočevar &
// Demšar 2014. The coefficients of those equations are not typed in; New
// derives them from delta/catalog by enumerating the spanning connected
// edge subsets of every graphlet.
//
// Writes are cheap and reads cost O(deg x): the trade-off against the eager
// engine of delta/undirected, which materialises every vector, is measured
// in this package's benchmarks (DESIGN.md §7). Touched names the nodes
// whose vectors may have changed since the last cut, expanded once per
// batch, so a checkpoint derives exactly those; Halo gives one event's.
// The Counter keeps its own sorted copy of the adjacency, with the
// triangle count of every edge beside it.
//
// It is not for directed graphs, for 5-node graphlets, or for storing
// vectors with their history (the caller derives and stores them), and a
// Counter is not safe for concurrent updates.
package factored
