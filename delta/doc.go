// Package delta holds the graph and the maths of orbitwatch: the kinds of
// graph counted, the simple graph projected from a multigraph of edge
// events, the per-node orbit vectors (graphlet degree vectors), and the
// Engine contract that every incremental counter fulfils.
//
// The package is pure: no I/O, no clocks, no mutable globals. Graphlet
// catalogs live in delta/catalog, the brute-force reference enumerator in
// delta/brute, the specialised undirected 2–4 node counters in
// delta/undirected, and the generic halo enumerator in delta/generic.
//
// It is not for decoding input, storing state or scheduling work; those are
// the stream, storage and shard packages.
package delta
