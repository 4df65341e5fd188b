package shard

import (
	"fmt"

	"orbitwatch/delta"
	"orbitwatch/delta/catalog"
	"orbitwatch/delta/generic"
	"orbitwatch/delta/undirected"
)

// Counting is the choice of counters for one graph kind and graphlet size:
// the catalog that names the orbits, the incremental engine, and the
// separate static recount that verifies it.
type Counting struct {
	Catalog *catalog.Catalog
	Engine  delta.Engine
	Recount delta.Recounter
}

// NewCounting picks the counters for kind and maxNodes: the specialised
// combinatorial counters for undirected graphlets of up to 4 nodes, the
// generic halo enumerator for everything else.
func NewCounting(kind delta.Kind, maxNodes int) (*Counting, error) {
	cat, err := catalog.New(kind, maxNodes)
	if err != nil {
		return nil, err
	}
	switch {
	case kind == delta.Undirected && maxNodes >= 3 && maxNodes <= 4:
		return &Counting{cat, undirected.NewEngine(maxNodes), undirected.NewRecounter(maxNodes)}, nil
	case kind == delta.Undirected && maxNodes == 5, kind == delta.Directed && maxNodes >= 3 && maxNodes <= 4:
		return &Counting{cat, generic.NewEngine(cat), generic.NewRecounter(cat)}, nil
	}
	return nil, fmt.Errorf("%v graphlets of up to %d nodes are not supported (undirected: 3–5, directed: 3–4)", kind, maxNodes)
}
