// Package signed counts the orbits of signed graphlets on 2–3 nodes
// (delta/catalog's signed numbering, 15 orbits) in the record design of
// DESIGN.md §7: per node its positive and negative degree and its
// triangles by sign pattern (how many of its own two ties are negative,
// and the sign of the tie facing it), kept current under edge events and
// sign flips; the open orbits (3-paths by sign) are derived on read from a
// node's record and the sums of its neighbours' signed degrees, the
// triangle orbits are the kept counts. Triangles split by balance (an
// even number of negative ties; Heider 1946, Cartwright & Harary 1956)
// are sums of those orbits.
//
// Hubs decide the design, as in delta/factored. A node is heavy while its
// degree is at least a threshold θ. Every node keeps the sums of its light
// neighbours' signed degrees (a light node's degree change moves at most θ
// of them) and lists its heavy neighbours, whose degrees are added on
// read; a heavy node's stored record carries its whole sums, so an as-of
// read of a hub reads no neighbour. No event walks a hub's neighbours:
// the common neighbours of an edge are found from the endpoint of smaller
// degree with membership tests on the other, and only a change of a light
// endpoint walks that endpoint's (at most θ) neighbours.
//
// Counter implements delta.Counter for delta.Signed graphs; NewRecounter
// is the static recount, a separate code path (each triangle listed once
// from the graph, neighbour sums walked) sharing only the orbit equations.
// The signed 2–4 node orbits are not counted here: shard uses the generic
// enumeration engine of delta/generic for them.
//
// It is not for unsigned graphs, and a Counter is not safe for concurrent
// updates.
package signed
