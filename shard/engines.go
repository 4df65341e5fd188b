package shard

import (
	"fmt"

	"orbitwatch/delta"
	"orbitwatch/delta/catalog"
	"orbitwatch/delta/directed"
	"orbitwatch/delta/factored"
	"orbitwatch/delta/five"
	"orbitwatch/delta/generic"
	"orbitwatch/delta/signed"
	"orbitwatch/delta/undirected"
)

// Counting is the choice of counters for one graph kind and graphlet size:
// the catalog that names the orbits, the record-keeping counter every
// product path uses, and the separate static recount that verifies it.
type Counting struct {
	Catalog *catalog.Catalog
	// New returns a fresh, empty counter (delta.Counter); each applier
	// owns one.
	New func() delta.Counter
	// Recount computes every vector from scratch by a separate code path.
	Recount delta.Recounter
}

// NewCounting picks the counters for kind and maxNodes: the factored
// records of delta/factored for undirected graphlets of up to 4 nodes
// (recounted by delta/undirected); for 5 nodes the vectors kept as records
// and recounted combinatorially at a cut (delta/five); the factored
// directed records of delta/directed (recounted combinatorially there).
func NewCounting(kind delta.Kind, maxNodes int) (*Counting, error) {
	cat, err := catalog.New(kind, maxNodes)
	if err != nil {
		return nil, err
	}
	switch {
	case kind == delta.Undirected && maxNodes >= 3 && maxNodes <= 4:
		return &Counting{cat, func() delta.Counter { return factored.New(maxNodes) }, undirected.NewRecounter(maxNodes)}, nil
	case kind == delta.Undirected && maxNodes == 5:
		return &Counting{cat, func() delta.Counter { return five.New() }, five.NewRecounter(five.Options{})}, nil
	case kind == delta.Directed && maxNodes == 3:
		return &Counting{cat, func() delta.Counter { return directed.NewTriads() }, directed.NewRecounter(3)}, nil
	case kind == delta.Directed && maxNodes == 4:
		return &Counting{cat, func() delta.Counter { return directed.NewQuads(0) }, directed.NewRecounter(4)}, nil
	case kind == delta.Signed && maxNodes == 3:
		// Signed 2–3: records of delta/signed, recounted there.
		return &Counting{cat, func() delta.Counter { return signed.New() }, signed.NewRecounter()}, nil
	case kind == delta.Signed && maxNodes == 4:
		// Signed 2–4: vectors kept as records by the generic halo
		// engine until a factored form exists (cost in the README).
		return &Counting{cat, func() delta.Counter { return delta.NewEager(generic.NewEngine(cat)) }, generic.NewRecounter(cat)}, nil
	}
	return nil, fmt.Errorf("%v graphlets of up to %d nodes are not supported (undirected: 3–5, directed: 3–4, signed: 3–4)", kind, maxNodes)
}
