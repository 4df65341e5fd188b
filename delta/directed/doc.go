// Package directed counts the orbits of directed graphlets (reciprocal
// arcs allowed; delta/catalog's directed numbering) by combinatorial
// equations instead of enumerating every connected node set.
//
// Triads is the 2–3 node delta.Counter in the record design (DESIGN.md
// §7): per node the typed degrees and the triangles by orbit, the
// per-node triad census of Ortmann & Brandes 2017 (Applied Network
// Science 2:13) kept current under arc events; open orbits are derived on
// read from a node's record and its neighbours' degrees. Quads is the
// 2–4 node Counter: Triads' records, and for heavy nodes (degree ≥ θ)
// their neighbour degree sums and typed codegrees with the other heavy
// nodes, kept as Eppstein, Goodrich, Strash & Trott 2010 keep pair
// counts among high-degree nodes; everything else is derived on read.
// An event at a hub costs what an event between two households costs.
// NewRecounter is the static 2–4 node recount: typed degrees, triangles,
// 4-cycles, diamonds and K4s counted once each, every other pattern from
// sums over neighbours, and all 730 orbits solved per node.
//
// All of them rest on one set of equations (equations.go): every orbit
// has a pattern (its graphlet's underlying graph with the pair types
// fixed and the other pairs free) whose count at a node is a sum of orbit
// counts with coefficients taken from delta/catalog, never typed in.
//
// The package is not the reference: delta/brute and the enumeration of
// delta/generic are, and the tests hold everything here to them. It does
// not count undirected graphs or 5-node graphlets.
package directed
