package conformance

import (
	"errors"
	"fmt"
	"hash/fnv"
	"math/rand/v2"
	"testing"

	"orbitwatch/delta"
	"orbitwatch/delta/brute"
	"orbitwatch/delta/catalog"
	"orbitwatch/delta/internal/pyref"
)

// Subject is one incremental counter under test.
type Subject struct {
	Name string
	// New returns a fresh, empty counter under test. When it is nil the
	// subject is Engine, run as delta.NewEager(Engine).
	New func() delta.Counter
	// Engine is an eager engine under test when New is nil.
	Engine delta.Engine
	// Recount is the subject's separate static recount. It may be nil only
	// for the suite's own self-test, where brute is the engine.
	Recount delta.Recounter
}

// counter returns a fresh counter of the subject.
func (s Subject) counter() delta.Counter {
	if s.New != nil {
		return s.New()
	}
	return delta.NewEager(s.Engine)
}

// Run replays every stream shape of the subject's kind and fails t at the
// first disagreement, naming the stream, the event, the node and the orbit.
// It needs a Python with networkx and igraph (see delta/internal/pyref).
func Run(t testing.TB, s Subject) {
	t.Helper()
	probe := s.counter()
	kind, k := probe.Kind(), probe.MaxNodes()
	c, err := catalog.New(kind, k)
	if err != nil {
		t.Fatalf("conformance: %s: %v", s.Name, err)
	}
	if probe.NumOrbits() != c.NumOrbits() {
		t.Fatalf("conformance: %s: counter has %d orbits, catalog %v 2..%d has %d", s.Name, probe.NumOrbits(), kind, k, c.NumOrbits())
	}
	ref := &references{}
	for _, st := range streams(kind, testing.Short()) {
		r := rand.New(rand.NewPCG(seed(st.name), uint64(kind)<<8|uint64(k)))
		rp := newReplay(t, s, c, st.name, st.nodes, ref)
		for i := 0; i < st.events; i++ {
			rp.step(r, st.next(r, rp.g, i), st.nodes)
		}
		rp.checkpoint()
		rp.finish()
	}
	if kind == delta.Undirected {
		karate(t, s, c, ref)
	}
	ref.run(t, s.Name)
}

// references collects the outside-reference calls of a whole run, for one
// Python process, and the checks that read their results.
type references struct {
	batch  pyref.Batch
	checks []func()
}

// run makes the Python calls and runs every queued check.
func (ref *references) run(t testing.TB, subject string) {
	t.Helper()
	if err := ref.batch.Run(); err != nil {
		t.Fatalf("conformance: %s: outside references: %v", subject, err)
	}
	for _, check := range ref.checks {
		check()
	}
}

func seed(name string) uint64 {
	h := fnv.New64a()
	h.Write([]byte(name))
	return h.Sum64()
}

// replay applies one stream to a graph and the subject's counter, checks
// every checkpoint against the recount and brute at once, and queues the
// outside-reference checks of the stream.
type replay struct {
	t      testing.TB
	s      Subject
	c      *catalog.Catalog
	label  string
	g      *delta.Graph
	cnt    delta.Counter
	v      *delta.Vectors // the counter's vectors at the last checkpoint
	events int
	// records holds every node's record at the last checkpoint, to hold
	// Changed to the records that really changed.
	records map[uint32]string
	due     int // events until the next checkpoint
	ref     *references
	queued  int // reference checks queued by this stream
	// cut is the event count at the last checkpoint, for messages.
	cut         int
	checkpoints int
	rejects     int
	empties     int // checkpoints at an emptied graph
	maxMult     uint32
}

func newReplay(t testing.TB, s Subject, c *catalog.Catalog, stream string, nodes int, ref *references) *replay {
	rp := &replay{t: t, s: s, c: c, label: fmt.Sprintf("conformance: %s, stream %q", s.Name, stream), g: delta.NewGraph(c.Kind), v: delta.NewVectors(0, c.NumOrbits()), due: 10, ref: ref, records: map[uint32]string{}}
	if s.New != nil || s.Engine != nil {
		rp.cnt = s.counter()
	}
	rp.g.Grow(nodes)
	rp.v.Grow(nodes)
	return rp
}

// step applies one event (or, with probability 0.08, a rejected event
// first) and checks at checkpoints: every 10–25 events and whenever the
// graph becomes empty.
func (rp *replay) step(r *rand.Rand, e event, nodes int) {
	if r.Float64() < 0.08 {
		rp.refuse(rejected(r, rp.g, nodes))
		rp.rejects++
	}
	rp.apply(e)
	rp.maxMult = max(rp.maxMult, rp.g.Multiplicity(e.u, e.v))
	rp.events++
	rp.due--
	if emptied := rp.g.NumEdges() == 0 && !e.add; rp.due <= 0 || emptied {
		if emptied {
			rp.empties++
		}
		rp.checkpoint()
		rp.due = 10 + r.IntN(16)
	}
}

// apply runs the counter only on a simple-graph change: Insert while g
// lacks uv, then Increment; Delete while g has uv with multiplicity 1, then
// Decrement.
func (rp *replay) apply(e event) {
	t, g := rp.t, rp.g
	t.Helper()
	if g.Kind() == delta.Signed {
		rp.applySigned(e)
		return
	}
	g.Grow(int(max(e.u, e.v)) + 1)
	before := g.NumEdges()
	var changed bool
	var err error
	var fault error
	if e.add {
		present := g.HasEdge(e.u, e.v)
		if !present {
			fault = rp.cnt.Insert(g, e.u, e.v, false)
			rp.unchanged(e, before, false)
		}
		changed, err = g.Increment(e.u, e.v)
		if err == nil && changed == present {
			t.Fatalf("%s, event %d: add %d-%d: graph reports change %v with edge present %v", rp.label, rp.events, e.u, e.v, changed, present)
		}
	} else {
		simple := g.Multiplicity(e.u, e.v) == 1
		if simple {
			fault = rp.cnt.Delete(g, e.u, e.v)
			rp.unchanged(e, before, true)
		}
		changed, err = g.Decrement(e.u, e.v)
		if err == nil && changed != simple {
			t.Fatalf("%s, event %d: remove %d-%d: graph reports change %v at multiplicity-1 %v", rp.label, rp.events, e.u, e.v, changed, simple)
		}
	}
	if err != nil {
		t.Fatalf("%s, event %d: %v of %d-%d: %v", rp.label, rp.events, verb(e), e.u, e.v, err)
	}
	if fault != nil {
		t.Fatalf("%s, event %d: %s %d-%d: %v", rp.label, rp.events, verb(e), e.u, e.v, fault)
	}
}

// unchanged fails when the engine left the graph other than it found it.
func (rp *replay) unchanged(e event, edges int, present bool) {
	if rp.g.NumEdges() != edges || rp.g.HasEdge(e.u, e.v) != present {
		rp.t.Fatalf("%s, event %d: engine did not restore the graph on %s %d-%d", rp.label, rp.events, verb(e), e.u, e.v)
	}
}

func verb(e event) string {
	if e.add {
		return "add"
	}
	return "remove"
}

// refuse applies an event the graph must reject and checks it changed
// nothing: the right error, the same edge count and multiplicity, and no
// engine call (the vectors are compared at the next checkpoint).
func (rp *replay) refuse(e event) {
	if rp.g.Kind() == delta.Signed {
		rp.refuseSigned(e)
		return
	}
	edges, mult := rp.g.NumEdges(), rp.g.Multiplicity(e.u, e.v)
	var err error
	if e.add {
		_, err = rp.g.Increment(e.u, e.v)
	} else {
		_, err = rp.g.Decrement(e.u, e.v)
	}
	want := delta.ErrAbsent
	if e.u == e.v {
		want = delta.ErrSelfLoop
	}
	if !errors.Is(err, want) || rp.g.NumEdges() != edges || rp.g.Multiplicity(e.u, e.v) != mult {
		rp.t.Fatalf("%s, event %d: rejected %s %d-%d: error %v (want %v), edges %d→%d", rp.label, rp.events, verb(e), e.u, e.v, err, want, edges, rp.g.NumEdges())
	}
}

// checkpoint demands, on every node and orbit, that the counter's vectors,
// the vectors Derive reads from its records and adjacency, and the
// Recount equal brute; that Changed named every node whose record
// changed since the last checkpoint; and, at every third checkpoint, that
// a fresh counter restored from the records goes on in its place. It
// queues the networkx checks of this graph.
func (rp *replay) checkpoint() {
	t := rp.t
	t.Helper()
	rp.cut = rp.events
	rp.checkpoints++
	want := brute.Count(rp.g, rp.c)
	rp.checkChanged()
	rp.v = rp.vectors(rp.read)
	rp.compare("incremental", rp.v, want)
	src := delta.NewMemSource(rp.g, rp.cnt)
	derived := rp.vectors(func(x uint32, dst []uint64) []uint64 {
		got, err := rp.cnt.Derive(src, x, dst)
		if err != nil {
			t.Fatalf("%s, checkpoint at event %d: Derive node %d: %v", rp.label, rp.cut, x, err)
		}
		return got
	})
	rp.compare("derived from records", derived, want)
	if rp.checkpoints%3 == 0 {
		fresh := rp.s.counter()
		if err := fresh.Restore(rp.g, src); err != nil {
			t.Fatalf("%s, checkpoint at event %d: Restore: %v", rp.label, rp.cut, err)
		}
		rp.cnt = fresh
		rp.compare("restored", rp.vectors(rp.read), want)
	}
	if rp.s.Recount != nil {
		rp.compare("recount", rp.s.Recount.Recount(rp.g), want)
	}
	if rp.c.Kind == delta.Signed {
		rp.checkUnsigned(want)
	}
	rp.queueCheckpoint(rp.v.Clone())
}

// read returns x's vector from the counter's in-memory state.
func (rp *replay) read(x uint32, dst []uint64) []uint64 {
	got, err := rp.cnt.Vector(x, dst)
	if err != nil {
		rp.t.Fatalf("%s, checkpoint at event %d: Vector node %d: %v", rp.label, rp.cut, x, err)
	}
	return got
}

// vectors returns every node's vector as read.
func (rp *replay) vectors(read func(x uint32, dst []uint64) []uint64) *delta.Vectors {
	v := delta.NewVectors(rp.g.NumNodes(), rp.c.NumOrbits())
	var buf []uint64
	for x := range uint32(rp.g.NumNodes()) {
		buf = read(x, buf)
		if len(buf) != rp.c.NumOrbits() {
			rp.t.Fatalf("%s, checkpoint at event %d: node %d read %d counts, want %d", rp.label, rp.cut, x, len(buf), rp.c.NumOrbits())
		}
		copy(v.Row(x), buf)
	}
	return v
}

// checkChanged fails when a node's record differs from the last
// checkpoint's without Changed naming it, then keeps the new records.
func (rp *replay) checkChanged() {
	named := map[uint32]bool{}
	rp.cnt.Changed(func(x uint32) { named[x] = true })
	var buf []byte
	for x := range uint32(rp.g.NumNodes()) {
		buf = rp.cnt.AppendRecord(buf[:0], x)
		if rec := string(buf); rec != rp.records[x] {
			if !named[x] {
				rp.t.Fatalf("%s, checkpoint at event %d: record of node %d changed but Changed did not name it", rp.label, rp.cut, x)
			}
			rp.records[x] = rec
		}
	}
}

func (rp *replay) compare(what string, got, want *delta.Vectors) {
	rp.t.Helper()
	if got.NumOrbits() != want.NumOrbits() {
		rp.t.Fatalf("%s, checkpoint at event %d: %s has %d orbits, want %d", rp.label, rp.cut, what, got.NumOrbits(), want.NumOrbits())
	}
	if x, o, a, b, ok := got.FirstDiff(want); !ok {
		rp.t.Fatalf("%s, checkpoint at event %d: node %d orbit %d (%s): %s %d, brute %d", rp.label, rp.cut, x, o, rp.c.Orbits[o].Name, what, a, b)
	}
}

// finish queues the motif checks of the final graph and logs what the
// stream covered.
func (rp *replay) finish() {
	rp.t.Helper()
	rp.queueMotifs(rp.v.Clone())
	rp.t.Logf("%s: %d events, %d rejected, %d checkpoints (%d at an emptied graph), %d reference checks, max multiplicity %d, final %d nodes %d edges",
		rp.label, rp.events, rp.rejects, rp.checkpoints, rp.empties, rp.queued, rp.maxMult, rp.g.NumNodes(), rp.g.NumEdges())
}
