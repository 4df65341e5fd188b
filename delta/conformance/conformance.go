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
	// Engine is the incremental counter under test.
	Engine delta.Engine
	// Recount is the subject's separate static recount. It may be nil only
	// for the suite's own self-test, where brute is the engine.
	Recount delta.Recounter
}

// Run replays every stream shape of the subject's kind and fails t at the
// first disagreement, naming the stream, the event, the node and the orbit.
// It needs a Python with networkx and igraph (see delta/internal/pyref).
func Run(t testing.TB, s Subject) {
	t.Helper()
	kind, k := s.Engine.Kind(), s.Engine.MaxNodes()
	c, err := catalog.New(kind, k)
	if err != nil {
		t.Fatalf("conformance: %s: %v", s.Name, err)
	}
	if s.Engine.NumOrbits() != c.NumOrbits() {
		t.Fatalf("conformance: %s: engine has %d orbits, catalog %v 2..%d has %d", s.Name, s.Engine.NumOrbits(), kind, k, c.NumOrbits())
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

// replay applies one stream to a graph and the subject's vectors, checks
// every checkpoint against the recount and brute at once, and queues the
// outside-reference checks of the stream.
type replay struct {
	t      testing.TB
	s      Subject
	c      *catalog.Catalog
	label  string
	g      *delta.Graph
	v      *delta.Vectors
	emit   delta.Emit
	fault  error
	events int
	due    int // events until the next checkpoint
	ref    *references
	queued int // reference checks queued by this stream
	// cut is the event count at the last checkpoint, for messages.
	cut         int
	checkpoints int
	rejects     int
	empties     int // checkpoints at an emptied graph
	maxMult     uint32
}

func newReplay(t testing.TB, s Subject, c *catalog.Catalog, stream string, nodes int, ref *references) *replay {
	rp := &replay{t: t, s: s, c: c, label: fmt.Sprintf("conformance: %s, stream %q", s.Name, stream), g: delta.NewGraph(c.Kind), v: delta.NewVectors(0, c.NumOrbits()), due: 10, ref: ref}
	rp.g.Grow(nodes)
	rp.v.Grow(nodes)
	rp.emit = func(x uint32, o int, d int64) {
		if rp.fault != nil {
			return
		}
		if int(x) >= rp.v.NumNodes() || o < 0 || o >= rp.c.NumOrbits() {
			rp.fault = fmt.Errorf("emit of node %d orbit %d outside %d nodes × %d orbits", x, o, rp.v.NumNodes(), rp.c.NumOrbits())
			return
		}
		if err := rp.v.Add(x, o, d); err != nil {
			rp.fault = err
		}
	}
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

// apply runs the engine only on a simple-graph change: Insert while g lacks
// uv, then Increment; Delete while g has uv with multiplicity 1, then
// Decrement.
func (rp *replay) apply(e event) {
	t, g := rp.t, rp.g
	t.Helper()
	g.Grow(int(max(e.u, e.v)) + 1)
	rp.v.Grow(g.NumNodes())
	before := g.NumEdges()
	var changed bool
	var err error
	if e.add {
		present := g.HasEdge(e.u, e.v)
		if !present {
			rp.s.Engine.Insert(g, e.u, e.v, rp.emit)
			rp.unchanged(e, before, false)
		}
		changed, err = g.Increment(e.u, e.v)
		if err == nil && changed == present {
			t.Fatalf("%s, event %d: add %d-%d: graph reports change %v with edge present %v", rp.label, rp.events, e.u, e.v, changed, present)
		}
	} else {
		simple := g.Multiplicity(e.u, e.v) == 1
		if simple {
			rp.s.Engine.Delete(g, e.u, e.v, rp.emit)
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
	if rp.fault != nil {
		t.Fatalf("%s, event %d: %s %d-%d: %v", rp.label, rp.events, verb(e), e.u, e.v, rp.fault)
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

// checkpoint demands incremental == Recount == brute on every node and
// orbit, and queues the networkx checks of this graph.
func (rp *replay) checkpoint() {
	t := rp.t
	t.Helper()
	rp.cut = rp.events
	rp.checkpoints++
	want := brute.Count(rp.g, rp.c)
	rp.v.Grow(rp.g.NumNodes())
	rp.compare("incremental", rp.v, want)
	if rp.s.Recount != nil {
		rp.compare("recount", rp.s.Recount.Recount(rp.g), want)
	}
	rp.queueCheckpoint(rp.v.Clone())
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
