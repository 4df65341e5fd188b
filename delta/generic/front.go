package generic

import "orbitwatch/delta"

// runner computes the changes of one edge change around uv; sign is +1
// for an insert, −1 for a delete; neg says an inserted edge of a Signed
// graph is negative (a deleted one's sign is read from g).
type runner interface {
	run(g *delta.Graph, u, v uint32, sign int64, neg bool, emit delta.Emit)
}

// front is the delta.Engine face of a runner: it checks the preconditions
// and passes the sign.
type front struct {
	t *tables
	r runner
}

func (f *front) Kind() delta.Kind { return f.t.kind }
func (f *front) MaxNodes() int    { return f.t.k }
func (f *front) NumOrbits() int   { return f.t.orbits }

// Insert emits the changes of adding uv (u→v) to g, which lacks it; a
// positive edge in a Signed graph.
func (f *front) Insert(g *delta.Graph, u, v uint32, emit delta.Emit) {
	f.InsertSigned(g, u, v, false, emit)
}

// InsertSigned emits the changes of adding uv to g, which lacks it, as a
// negative edge when neg (neg must be false unless g is Signed).
func (f *front) InsertSigned(g *delta.Graph, u, v uint32, neg bool, emit delta.Emit) {
	if u == v || g.HasEdge(u, v) {
		panic("generic: Insert of a self-loop or present edge")
	}
	if g.Kind() != f.t.kind {
		panic("generic: graph kind differs from the catalog's")
	}
	if neg && f.t.kind != delta.Signed {
		panic("generic: a negative edge in a graph that is not Signed")
	}
	f.r.run(g, u, v, +1, neg, emit)
}

// Delete emits the changes of removing uv (u→v) from g, which has it.
func (f *front) Delete(g *delta.Graph, u, v uint32, emit delta.Emit) {
	if !g.HasEdge(u, v) {
		panic("generic: Delete of an absent edge")
	}
	if g.Kind() != f.t.kind {
		panic("generic: graph kind differs from the catalog's")
	}
	f.r.run(g, u, v, -1, false, emit)
}
