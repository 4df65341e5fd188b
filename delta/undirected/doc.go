// Package undirected holds the specialised counters of undirected
// graphlets on 2–4 nodes: a static recount of every node's orbit vector and
// an incremental engine that emits the orbit changes of one edge insertion
// or deletion.
//
// Orbits follow the published numbering (Pržulj 2007): 0 edge; 1 end and
// 2 middle of the 3-path; 3 triangle; 4 end and 5 middle of the 4-path;
// 6 leaf and 7 centre of the 3-star; 8 4-cycle; 9 tail end, 10 degree-2 and
// 11 degree-3 node of the tailed triangle; 12 degree-2 and 13 degree-3 node
// of the diamond; 14 K4. With maxNodes 3 only orbits 0–3 are counted.
//
// Both counters are combinatorial. The recount expresses non-induced
// pattern counts by degrees, triangles and common neighbours and solves
// them for the induced orbit counts (the approach of Hočevar & Demšar 2014,
// with the relations derived in recount.go); triangles, K4s and 4-cycles
// are enumerated once each over a degree ordering.
// The engine classifies the halo of the changed edge uv by membership in
// N(u)\N(v), N(v)\N(u) and N(u)∩N(v) and derives every node's change from
// edge counts inside and between those sets, so its work follows the number
// of counters that change rather than the number of node sets in the halo.
//
// It is not for directed graphs, for 5-node graphlets (delta/generic
// enumerates those), or for storing vectors (the caller owns them).
package undirected
