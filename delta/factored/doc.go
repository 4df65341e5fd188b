// Package factored keeps the undirected 2–3 and 2–4 node orbit counts of a
// changing graph as per-node records — quantities that change only near a
// changed edge — and derives a node's exact orbit vector (Pržulj 2007
// numbering, orbits 0–14) from its record and its neighbours' when it is
// read: non-induced pattern counts solved for induced orbit counts by the
// orbit equations, the approach of Hočevar & Demšar 2014. The equations'
// coefficients are not typed in; they are derived from delta/catalog by
// enumerating the spanning connected edge subsets of every graphlet.
//
// Hubs decide the design (DESIGN.md §7). A node is heavy while its degree
// is at least a threshold θ, so there are at most 2|E|/θ heavy nodes. No
// update walks a heavy node's neighbours: sums over neighbours are kept
// only over light ones (a light node's degree change moves at most θ of
// them), the degrees of heavy neighbours are added on read, membership in
// a heavy node's neighbour list is searched, and 4-cycles and diamonds
// whose pair of neighbours (or chord) is two heavy nodes are read from the
// number of common neighbours of every pair of heavy nodes (the h-index
// structures of Eppstein & Spiro 2012 and Eppstein, Goodrich, Strash &
// Trott 2010 in a simpler form). A payment to a merchant with a million
// customers then costs what a payment between two households costs plus
// the triangles and 4-cycles it really closes; only an edge between two
// heavy nodes walks the lighter one's neighbours.
//
// Counter implements delta.Counter: records are what Changed names and
// AppendRecord stores, Derive reads a stored state's records and adjacency
// for an as-of vector, and Restore rebuilds the counter from a stored
// adjacency and holds it to the stored records. The Counter keeps its own
// sorted adjacency (long lists in blocks) with the triangle count of every
// edge beside it.
//
// It is not for directed or signed graphs or 5-node graphlets, and a
// Counter is not safe for concurrent updates.
package factored
