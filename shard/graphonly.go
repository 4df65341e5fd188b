package shard

import (
	"orbitwatch/delta"
	"orbitwatch/delta/catalog"
)

// GraphOnly returns an engine that emits no orbit changes: with it an
// Applier only maintains the multigraph, for commands that recount the final
// graph statically instead of counting incrementally.
func GraphOnly(cat *catalog.Catalog) delta.Engine { return graphOnly{cat} }

type graphOnly struct{ cat *catalog.Catalog }

func (e graphOnly) Kind() delta.Kind                              { return e.cat.Kind }
func (e graphOnly) MaxNodes() int                                 { return e.cat.MaxNodes }
func (e graphOnly) NumOrbits() int                                { return e.cat.NumOrbits() }
func (graphOnly) Insert(*delta.Graph, uint32, uint32, delta.Emit) {}
func (graphOnly) Delete(*delta.Graph, uint32, uint32, delta.Emit) {}
