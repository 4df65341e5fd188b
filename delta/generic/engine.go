package generic

import (
	"orbitwatch/delta"
	"orbitwatch/delta/catalog"
)

// NewEngine returns the incremental Engine to use for cat's kind and size.
// It gives the same changes as NewEnumerator, summed per (node, orbit).
func NewEngine(cat *catalog.Catalog) delta.Engine {
	return NewEnumerator(cat)
}
