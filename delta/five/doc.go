// Package five counts the orbits of undirected graphlets on 2–5 nodes (73
// orbits, catalog numbering) without visiting every connected 5-node set,
// which on graphs with hubs number in the billions.
//
// The static recount (NewRecounter) takes orbits 0–14 from
// delta/undirected; lists every induced triangle, 4-cycle and 5-cycle
// once (edges oriented up the degree order) and counts the connected
// 5-node sets around each, which gives every 5-node graphlet with a
// cycle, each set reached once per induced cycle it holds (a multiplicity
// computed from the catalog); and counts the non-induced copies of the
// three 5-node trees at each node by formula, solving the orbit equations
// of Hočevar & Demšar 2014 for the induced tree orbits with coefficients
// computed by catalog.Overlap, never typed in. It runs on all cores and
// reports progress through a callback.
//
// The Counter (NewCounter) is the incremental 2–5 counter of the record
// interface: see its documentation for the design and the measurements
// that chose it.
//
// The enumerators (delta/generic, delta/brute) remain the reference;
// this package is held to them in its tests. It is not for directed or
// signed graphs.
package five
