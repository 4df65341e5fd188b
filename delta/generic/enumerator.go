package generic

import (
	"orbitwatch/delta"
	"orbitwatch/delta/catalog"
)

// enumerator is the reference incremental engine: a seeded ESU enumeration
// of every connected node set around the changed edge.
type enumerator struct {
	halo
	// ext[d] is the extension list from which position d is filled.
	ext [maxNodes + 1][]uint32
}

// NewEnumerator returns the reference Engine for cat's kind and size. For a
// changed edge uv it visits each node set S ∋ u,v, |S| ≤ k, that is
// (weakly) connected with uv present, exactly once: S grows from {u,v} by
// one node w of the extension list at a time, and the list for the next
// node is the rest of the current list plus the exclusive neighbours of w
// (adjacent to w, not to S) — ESU, Wernicke 2006, with the fixed seed {u,v}
// in place of a root. Each set costs one table look-up; the code of a set
// is built from per-node adjacency masks, so no adjacency is tested twice.
// The engine is not safe for concurrent use.
func NewEnumerator(cat *catalog.Catalog) delta.Engine {
	t := newTables(cat)
	return &front{t: t, r: &enumerator{halo: halo{t: t}}}
}

// run enumerates the sets around uv; sign is +1 for an insert, −1 for a
// delete. The enumeration never depends on whether uv is present, because
// u and v are in every set.
func (e *enumerator) run(g *delta.Graph, u, v uint32, sign int64, neg bool, emit delta.Emit) {
	code, ext := e.seed(g, u, v, neg, e.ext[2][:0])
	e.ext[2] = ext
	e.t.emitSet(2, code, &e.nodes, sign, emit)
	if e.t.k > 2 {
		e.extend(g, 2, code, ext, sign, emit)
	}
	e.leave(1)
	e.leave(0)
}

// extend fills position d from ext, for every set S = nodes[:d] with code
// (without the changing edge) code.
func (e *enumerator) extend(g *delta.Graph, d int, code uint32, ext []uint32, sign int64, emit delta.Emit) {
	for i, w := range ext {
		e.nodes[d] = w
		c := code | e.codeAt(d, w)
		e.t.emitSet(d+1, c, &e.nodes, sign, emit)
		if d+1 == e.t.k {
			continue
		}
		next := append(e.ext[d+1][:0], ext[i+1:]...)
		next = e.join(g, d, w, next)
		e.ext[d+1] = next
		e.extend(g, d+1, c, next, sign, emit)
		e.leave(d)
	}
}
