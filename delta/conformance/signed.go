package conformance

import (
	"errors"
	"math/rand/v2"

	"orbitwatch/delta"
	"orbitwatch/delta/brute"
	"orbitwatch/delta/catalog"
	"orbitwatch/delta/internal/pyref"
)

// signedStreams returns the shapes run for the Signed kind: every
// undirected shape with signs drawn (a third of the adds negative, removes
// of a sign the pair holds), an all-positive stream, and shapes of their
// own: sign flips of present pairs, removes of one sign while the other
// stays, and a hub with many negative ties.
func signedStreams(short bool) []stream {
	scale := func(n int) int {
		if short {
			return n / 2
		}
		return n
	}
	var s []stream
	for _, st := range streams(delta.Undirected, short) {
		s = append(s, withSigns(st, 1.0/3))
	}
	return append(s,
		withSigns(stream{"every sign positive", 14, scale(150), func(r *rand.Rand, g *delta.Graph, _ int) event {
			return addOrRemove(r, g, 14, 0.8)
		}}, 0),
		signFlips(scale(240)),
		oneSignRemoves(scale(240)),
		withSigns(hub("hub of disputes", 16, scale(200), 0.5), 0.45),
	)
}

// withSigns gives a stream's adds the negative sign with probability
// pNeg, and its removes a sign the pair holds.
func withSigns(st stream, pNeg float64) stream {
	next := st.next
	st.next = func(r *rand.Rand, g *delta.Graph, i int) event {
		e := next(r, g, i)
		if e.add {
			e.neg = r.Float64() < pNeg
		} else {
			e.neg = heldSign(r, g, e.u, e.v)
		}
		return e
	}
	return st
}

// heldSign returns a sign whose multiplicity on {u,v} is above zero (a
// random one when both are).
func heldSign(r *rand.Rand, g *delta.Graph, u, v uint32) bool {
	p, n := g.Multiplicities(u, v)
	switch {
	case p == 0:
		return true
	case n == 0:
		return false
	}
	return r.IntN(2) == 0
}

// signFlips works a pool of 8 pairs on 9 nodes amid random signed edges:
// a positive pair mostly gets a dispute (it turns negative), a negative
// one mostly loses one (it turns positive again when positives stay).
func signFlips(events int) stream {
	var pool [][2]uint32
	return stream{"sign flips", 9, events, func(r *rand.Rand, g *delta.Graph, i int) event {
		if i == 0 {
			pool = pool[:0]
			for len(pool) < 8 {
				u, v := pair(r, 9)
				pool = append(pool, [2]uint32{u, v})
			}
		}
		if r.Float64() < 0.3 {
			e := addOrRemove(r, g, 9, 0.6)
			if e.add {
				e.neg = r.IntN(3) == 0
			} else {
				e.neg = heldSign(r, g, e.u, e.v)
			}
			return e
		}
		q := pool[r.IntN(len(pool))]
		p, n := g.Multiplicities(q[0], q[1])
		switch x := r.Float64(); {
		case n == 0 && p > 0 && x < 0.6:
			return event{true, q[0], q[1], true} // a dispute turns it negative
		case n > 0 && x < 0.6:
			return event{false, q[0], q[1], true} // a dispute closes
		case p > 0 && x < 0.8:
			return event{false, q[0], q[1], false}
		}
		return event{true, q[0], q[1], r.IntN(4) == 0}
	}}
}

// oneSignRemoves builds pairs holding both signs, then removes units of
// one sign while the other stays (and adds them back).
func oneSignRemoves(events int) stream {
	return stream{"removes of one sign while the other stays", 10, events, func(r *rand.Rand, g *delta.Graph, i int) event {
		if i < events/3 {
			if u, v, ok := existing(r, g); ok && i%2 == 1 {
				p, _ := g.Multiplicities(u, v)
				return event{true, u, v, p > 0}
			}
			a, b := pair(r, 10)
			return event{true, a, b, r.IntN(2) == 0}
		}
		u, v, ok := existing(r, g)
		if !ok {
			a, b := pair(r, 10)
			return event{true, a, b, r.IntN(2) == 0}
		}
		p, n := g.Multiplicities(u, v)
		switch x := r.Float64(); {
		case p > 0 && n > 0 && x < 0.7:
			return event{false, u, v, r.IntN(2) == 0} // one sign goes, the other stays
		case x < 0.5:
			return event{true, u, v, p > 0 && n == 0} // give it the other sign
		}
		return event{false, u, v, heldSign(r, g, u, v)}
	}}
}

// rejectedSigned returns an event a Signed graph must refuse: mostly a
// remove of a sign whose multiplicity is zero, preferably on a pair the
// other sign keeps; else a self-loop.
func rejectedSigned(r *rand.Rand, g *delta.Graph, n int) event {
	if r.IntN(4) != 0 {
		var fallback *event
		for try := 0; try < 100; try++ {
			u, v := pair(r, n)
			p, m := g.Multiplicities(u, v)
			switch {
			case p > 0 && m == 0:
				return event{false, u, v, true}
			case m > 0 && p == 0:
				return event{false, u, v, false}
			case p == 0 && fallback == nil:
				fallback = &event{false, u, v, r.IntN(2) == 0}
			}
		}
		if fallback != nil {
			return *fallback
		}
	}
	x := uint32(r.IntN(n))
	return event{r.IntN(2) == 0, x, x, r.IntN(2) == 0}
}

// guarded is the counter under test seen through ApplySigned: it fails
// the test when a call leaves the graph other than it found it or comes
// at the wrong moment (Insert with the edge present, Delete with it
// absent).
type guarded struct {
	delta.Counter
	rp *replay
	e  event
}

func (c guarded) check(g *delta.Graph, u, v uint32, present bool, call func() error) error {
	edges, links := g.NumEdges(), g.Links(u, v)
	if g.HasEdge(u, v) != present {
		c.rp.t.Fatalf("%s, event %d: counter called with edge %d-%d present %v", c.rp.label, c.rp.events, u, v, !present)
	}
	err := call()
	if g.NumEdges() != edges || g.Links(u, v) != links {
		c.rp.t.Fatalf("%s, event %d: counter did not restore the graph on %s %d-%d", c.rp.label, c.rp.events, verb(c.e), u, v)
	}
	return err
}

func (c guarded) Insert(g *delta.Graph, u, v uint32, neg bool) error {
	return c.check(g, u, v, false, func() error { return c.Counter.Insert(g, u, v, neg) })
}

func (c guarded) Delete(g *delta.Graph, u, v uint32) error {
	return c.check(g, u, v, true, func() error { return c.Counter.Delete(g, u, v) })
}

// applySigned applies a signed event through delta.ApplySigned, which
// calls the counter exactly where the signed simple graph changes (a sign
// flip as a Delete and an Insert).
func (rp *replay) applySigned(e event) {
	t, g := rp.t, rp.g
	t.Helper()
	before := g.Links(e.u, e.v)
	changed, err := delta.ApplySigned(g, guarded{rp.cnt, rp, e}, e.u, e.v, e.neg, e.add)
	if err != nil {
		t.Fatalf("%s, event %d: %s %d-%d (negative %v): %v", rp.label, rp.events, verb(e), e.u, e.v, e.neg, err)
	}
	if changed != (g.Links(e.u, e.v) != before) {
		t.Fatalf("%s, event %d: %s %d-%d: change %v reported, links %b → %b", rp.label, rp.events, verb(e), e.u, e.v, changed, before, g.Links(e.u, e.v))
	}
}

// refuseSigned applies an event the Signed graph must reject and checks
// it changed nothing and called no counter.
func (rp *replay) refuseSigned(e event) {
	g := rp.g
	edges := g.NumEdges()
	p, n := g.Multiplicities(e.u, e.v)
	_, err := delta.ApplySigned(g, uncalled{rp}, e.u, e.v, e.neg, e.add)
	want := delta.ErrAbsent
	if e.u == e.v {
		want = delta.ErrSelfLoop
	}
	p2, n2 := g.Multiplicities(e.u, e.v)
	if !errors.Is(err, want) || g.NumEdges() != edges || p2 != p || n2 != n {
		rp.t.Fatalf("%s, event %d: rejected %s %d-%d (negative %v): error %v (want %v), edges %d→%d, multiplicities %d,%d → %d,%d", rp.label, rp.events, verb(e), e.u, e.v, e.neg, err, want, edges, g.NumEdges(), p, n, p2, n2)
	}
}

// uncalled is a counter that must not be called.
type uncalled struct{ rp *replay }

func (c uncalled) fail() error {
	c.rp.t.Fatalf("%s, event %d: a rejected event reached the counter", c.rp.label, c.rp.events)
	return nil
}

func (uncalled) Kind() delta.Kind                                        { return delta.Signed }
func (uncalled) MaxNodes() int                                           { return 0 }
func (uncalled) NumOrbits() int                                          { return 0 }
func (c uncalled) Insert(*delta.Graph, uint32, uint32, bool) error       { return c.fail() }
func (c uncalled) Delete(*delta.Graph, uint32, uint32) error             { return c.fail() }
func (uncalled) Vector(uint32, []uint64) ([]uint64, error)               { return nil, nil }
func (uncalled) Changed(func(uint32))                                    {}
func (uncalled) AppendRecord(dst []byte, _ uint32) []byte                { return dst }
func (uncalled) Restore(*delta.Graph, delta.Source) error                { return nil }
func (uncalled) Derive(delta.Source, uint32, []uint64) ([]uint64, error) { return nil, nil }

// unsignedOrbits maps every signed orbit to the undirected orbit of the
// same position in the graphlet without its signs.
func unsignedOrbits(c, u *catalog.Catalog) []int {
	m := make([]int, c.NumOrbits())
	for _, o := range c.Orbits {
		g := c.Graphlets[o.Graphlet]
		_, orbits := u.Lookup(g.Nodes, catalog.Code(delta.Undirected, g.Edges))
		m[o.ID] = int(orbits[o.Positions[0]])
	}
	return m
}

// checkUnsigned holds the signed vectors (already equal to brute's) to the
// undirected kind's on the same graph without its signs: summed over the
// signed orbits of each unsigned orbit they must equal the undirected
// count, node by node; and while no tie is negative every orbit of a
// graphlet with a negative tie must be zero (with every sign +, the
// signed counts are the undirected ones).
func (rp *replay) checkUnsigned(v *delta.Vectors) {
	rp.t.Helper()
	ucat, err := catalog.New(delta.Undirected, rp.c.MaxNodes)
	if err != nil {
		rp.t.Fatal(err)
	}
	plain := delta.NewGraph(delta.Undirected)
	plain.Grow(rp.g.NumNodes())
	negatives := 0
	rp.g.ForEachEdge(func(a, b uint32, _ uint32) {
		plain.Increment(a, b)
		if rp.g.Links(a, b)&delta.LinkNeg != 0 {
			negatives++
		}
	})
	want := brute.Count(plain, ucat)
	folded := delta.NewVectors(rp.g.NumNodes(), ucat.NumOrbits())
	to := unsignedOrbits(rp.c, ucat)
	for x := range uint32(rp.g.NumNodes()) {
		for o, n := range v.Row(x) {
			folded.Set(x, to[o], folded.Get(x, to[o])+n)
			if negatives == 0 && n != 0 && hasNegative(rp.c.Graphlets[rp.c.Orbits[o].Graphlet]) {
				rp.t.Fatalf("%s, checkpoint at event %d: no negative tie, yet node %d has %d in orbit %d (%s)", rp.label, rp.cut, x, n, o, rp.c.Orbits[o].Name)
			}
		}
	}
	if x, o, a, b, ok := folded.FirstDiff(want); !ok {
		rp.t.Fatalf("%s, checkpoint at event %d: node %d undirected orbit %d (%s): signed orbits sum to %d, undirected brute %d", rp.label, rp.cut, x, o, ucat.Orbits[o].Name, a, b)
	}
}

func hasNegative(g catalog.Graphlet) bool {
	for _, n := range g.Neg {
		if n {
			return true
		}
	}
	return false
}

// queueSigned queues networkx's view of the signed graph (positive and
// negative degree, balanced and unbalanced triangles per node) against
// the vectors v.
func (rp *replay) queueSigned(cut int, gr pyref.Graph, v *delta.Vectors) {
	ref := rp.ref.batch.SignedTriangles(gr)
	rp.queue(func() { rp.checkSigned(cut, v, *ref) })
}

// checkSigned holds the 2-node orbits to networkx's positive and negative
// degree and the sums of the triangle orbits, split by balance (an even
// number of negative ties), to networkx's triangle counts from
// enumerate_all_cliques.
func (rp *replay) checkSigned(cut int, v *delta.Vectors, ref [][4]uint64) {
	rp.t.Helper()
	if len(ref) != v.NumNodes() {
		rp.t.Fatalf("%s, checkpoint at event %d: networkx answered for %d nodes, we have %d", rp.label, cut, len(ref), v.NumNodes())
	}
	// col[o]: which networkx column orbit o adds to (−1: none).
	col := make([]int, rp.c.NumOrbits())
	for _, o := range rp.c.Orbits {
		g := rp.c.Graphlets[o.Graphlet]
		neg := 0
		for _, n := range g.Neg {
			if n {
				neg++
			}
		}
		switch {
		case g.Nodes == 2:
			col[o.ID] = neg
		case g.Nodes == 3 && len(g.Edges) == 3:
			col[o.ID] = 2 + neg%2
		default:
			col[o.ID] = -1
		}
	}
	names := [4]string{"positive degree", "negative degree", "balanced triangles", "unbalanced triangles"}
	for x := range uint32(v.NumNodes()) {
		var ours [4]uint64
		for o, n := range v.Row(x) {
			if col[o] >= 0 {
				ours[col[o]] += n
			}
		}
		cols := 4
		if rp.c.MaxNodes < 3 {
			cols = 2
		}
		for i := range cols {
			if ours[i] != ref[x][i] {
				rp.t.Fatalf("%s, checkpoint at event %d: node %d %s: ours %d, networkx %d", rp.label, cut, x, names[i], ours[i], ref[x][i])
			}
		}
	}
}

// queueSignedMotifs queues igraph's motif census of the final graph
// without its signs, sizes 3..MaxNodes: the occurrences of the signed
// graphlets of each unsigned graphlet must add up to igraph's count.
func (rp *replay) queueSignedMotifs(v *delta.Vectors) {
	gr := pyref.FromDelta(rp.g).Unsigned()
	ucat, err := catalog.New(delta.Undirected, rp.c.MaxNodes)
	if err != nil {
		rp.t.Fatal(err)
	}
	for size := 3; size <= rp.c.MaxNodes; size++ {
		ms := rp.ref.batch.Motifs(gr, size)
		rp.queue(func() { rp.checkSignedMotifs(ucat, size, v, *ms) })
	}
}

func (rp *replay) checkSignedMotifs(ucat *catalog.Catalog, size int, v *delta.Vectors, ms []pyref.Motif) {
	rp.t.Helper()
	sums := map[int]uint64{}
	for _, g := range rp.c.Graphlets {
		if g.Nodes != size {
			continue
		}
		n, ok := rp.occurrences(v, g.ID)
		if !ok {
			rp.t.Fatalf("%s, final graph: orbit sums of graphlet %d (%s) are inconsistent", rp.label, g.ID, g.Name)
		}
		ugid, _ := ucat.Lookup(size, catalog.Code(delta.Undirected, g.Edges))
		sums[ugid] += n
	}
	matched := 0
	for _, m := range ms {
		ugid, _ := ucat.Lookup(size, catalog.Code(delta.Undirected, m.Edges))
		if ugid < 0 {
			if m.Counted {
				rp.t.Fatalf("%s, final graph: igraph counted disconnected %d-node class %d", rp.label, size, m.Class)
			}
			continue
		}
		matched++
		if sums[ugid] != m.Count {
			rp.t.Fatalf("%s, final graph: signed graphlets over unsigned graphlet %d (%s): ours %d, igraph motifs_randesu class %d %d", rp.label, ugid, ucat.Graphlets[ugid].Name, sums[ugid], m.Class, m.Count)
		}
	}
	if matched != len(sums) {
		rp.t.Fatalf("%s: igraph's %d-node classes matched %d unsigned graphlets, want %d", rp.label, size, matched, len(sums))
	}
}
