package undirected

import (
	"fmt"

	"github.com/RoaringBitmap/roaring/v2"

	"orbitwatch/delta"
)

// Roles of the nodes around a changed edge uv, kept in engine.mark.
const (
	roleFar = iota // outside N[u] ∪ N[v] (set R)
	roleA          // A = N(u) \ N[v]
	roleB          // B = N(v) \ N[u]
	roleC          // C = N(u) ∩ N(v)
	roleEnd        // u or v
	numRoles
)

// engine is the incremental counter. Its scratch state is reused across
// events, so an event allocates nothing once the buffers have grown to the
// largest degrees seen.
type engine struct {
	maxNodes, orbits int
	// mark[x] is x's role in the current event, roleFar outside it. One
	// byte per node keeps the array in cache; change resets what it set.
	mark   []uint8
	nu, nv []uint32
	inner  []uint32 // the halo nodes whose neighbours halo4 walks
	it     roaring.ManyIntIterator
	lanes  [lanes]lane
}

// NewEngine returns the incremental counter of orbits on 2..maxNodes nodes
// (maxNodes 2, 3 or 4). For a changed edge uv its work is
// O(deg u + deg v + Σ_{w∈N(u)∪N(v)} deg w) and it emits at most a constant
// number of changes per halo node plus one or two per path u–w–z or v–w–z
// that leaves N[u] ∪ N[v].
func NewEngine(maxNodes int) delta.Engine {
	return &engine{maxNodes: maxNodes, orbits: numOrbits(maxNodes)}
}

func (e *engine) Kind() delta.Kind { return delta.Undirected }
func (e *engine) MaxNodes() int    { return e.maxNodes }
func (e *engine) NumOrbits() int   { return e.orbits }

// Insert emits the changes of adding uv; g must lack uv, u != v.
func (e *engine) Insert(g *delta.Graph, u, v uint32, emit delta.Emit) {
	e.check(g, u, v)
	if g.HasEdge(u, v) {
		panic(fmt.Sprintf("undirected: Insert of present edge %d-%d", u, v))
	}
	e.change(g, u, v, 1, emit)
}

// Delete emits the changes of removing uv; g must have uv. It is the
// negated insertion into G − uv, computed without touching g: u and v
// simply ignore each other as neighbours.
func (e *engine) Delete(g *delta.Graph, u, v uint32, emit delta.Emit) {
	e.check(g, u, v)
	if !g.HasEdge(u, v) {
		panic(fmt.Sprintf("undirected: Delete of absent edge %d-%d", u, v))
	}
	e.change(g, u, v, -1, emit)
}

func (e *engine) check(g *delta.Graph, u, v uint32) {
	checkKind(g)
	if u == v || int(max(u, v)) >= g.NumNodes() {
		panic(fmt.Sprintf("undirected: edge %d-%d is a self-loop or names a node outside the graph", u, v))
	}
}

// change emits s times the changes of inserting uv into G − uv.
func (e *engine) change(g *delta.Graph, u, v uint32, s int64, emit delta.Emit) {
	if len(e.mark) < g.NumNodes() {
		e.mark = append(e.mark, make([]uint8, g.NumNodes()-len(e.mark))...)
	}
	e.nu = e.load(e.nu, g.Out(u))
	e.nv = e.load(e.nv, g.Out(v))
	defer e.reset(u, v)
	e.mark[u], e.mark[v] = roleEnd, roleEnd
	var nu, nv, c int64
	for _, w := range e.nu {
		if w != v {
			e.mark[w] = roleA
			nu++
		}
	}
	for _, w := range e.nv {
		if w == u {
			continue
		}
		nv++
		if e.mark[w] == roleA {
			e.mark[w] = roleC
			c++
		} else {
			e.mark[w] = roleB
		}
	}
	a, b := nu-c, nv-c
	var du, dv [maxOrbits]int64
	du[oEdge], dv[oEdge] = 1, 1
	switch e.maxNodes {
	case 3:
		e.halo3(s, emit)
	case 4:
		var h halo
		h.size = [numRoles]int64{roleA: a, roleB: b, roleC: c}
		e.halo4(g, s, &h, emit)
		endpoint4(&du, &h, roleA, roleB)
		endpoint4(&dv, &h, roleB, roleA)
	}
	if e.maxNodes >= 3 {
		endpoint3(&du, a, b, c)
		endpoint3(&dv, b, a, c)
	}
	flush(u, &du, s, emit)
	flush(v, &dv, s, emit)
}

// reset clears the marks that change set; it runs deferred, so a
// panicking emit leaves the engine usable.
func (e *engine) reset(u, v uint32) {
	for _, w := range e.nu {
		e.mark[w] = roleFar
	}
	for _, w := range e.nv {
		e.mark[w] = roleFar
	}
	e.mark[u], e.mark[v] = roleFar, roleFar
}

// load copies bitmap b into dst, growing it only when b is larger than any
// bitmap loaded before.
func (e *engine) load(dst []uint32, b *roaring.Bitmap) []uint32 {
	n := int(b.GetCardinality())
	if cap(dst) < n {
		dst = make([]uint32, n, 2*n)
	}
	dst = dst[:n]
	e.it.Initialize(b)
	e.it.NextMany(dst)
	return dst
}

// flush emits the nonzero entries of d times s and clears d.
func flush(x uint32, d *[maxOrbits]int64, s int64, emit delta.Emit) {
	for o, k := range d {
		if k != 0 {
			emit(x, o, s*k)
			d[o] = 0
		}
	}
}

// endpoint3 adds the 3-node changes of endpoint u, where a counts u's own
// side N(u)\N[v], b the other side and c the common neighbours: new
// 3-paths w–u–v with u in the middle (a) and u–v–w with u at an end (b);
// 3-paths u–w–v closing into triangles (c).
func endpoint3(d *[maxOrbits]int64, a, b, c int64) {
	d[oPathEnd3] += b - c
	d[oPathMid3] += a
	d[oTriangle] += c
}

// halo3 emits the 3-node changes of the halo nodes: a node of A or B
// becomes the end of a new 3-path, a common neighbour turns its 3-path
// into a triangle.
func (e *engine) halo3(s int64, emit delta.Emit) {
	for _, w := range e.nu {
		switch e.mark[w] {
		case roleA:
			emit(w, oPathEnd3, s)
		case roleC:
			emit(w, oPathMid3, -s)
			emit(w, oTriangle, s)
		}
	}
	for _, w := range e.nv {
		if e.mark[w] == roleB {
			emit(w, oPathEnd3, s)
		}
	}
}
