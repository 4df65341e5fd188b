package conformance

import (
	"fmt"
	"runtime"
	"strings"
	"sync"
	"testing"

	"orbitwatch/delta"
	"orbitwatch/delta/brute"
	"orbitwatch/delta/catalog"
)

// recompute is the slowest honest engine: Δ = brute(G′) − brute(G), with
// G′ made by Link/Unlink and undone before returning.
type recompute struct {
	c *catalog.Catalog
}

func (e recompute) Kind() delta.Kind { return e.c.Kind }
func (e recompute) MaxNodes() int    { return e.c.MaxNodes }
func (e recompute) NumOrbits() int   { return e.c.NumOrbits() }

func (e recompute) Insert(g *delta.Graph, u, v uint32, emit delta.Emit) {
	e.across(g, emit, func() { g.Link(u, v) }, func() { g.Unlink(u, v) })
}

func (e recompute) Delete(g *delta.Graph, u, v uint32, emit delta.Emit) {
	p, n := g.Multiplicities(u, v)
	e.across(g, emit, func() { g.Unlink(u, v) }, func() { g.SetMultiplicities(u, v, p, n) })
}

// InsertSigned makes recompute a delta.SignedEngine: the edge is linked
// with its sign.
func (e recompute) InsertSigned(g *delta.Graph, u, v uint32, neg bool, emit delta.Emit) {
	p, n := uint32(1), uint32(0)
	if neg {
		p, n = 0, 1
	}
	e.across(g, emit, func() { g.SetMultiplicities(u, v, p, n) }, func() { g.Unlink(u, v) })
}

// across emits brute(after change) − brute(before) and undoes the change.
func (e recompute) across(g *delta.Graph, emit delta.Emit, change, undo func()) {
	before := brute.Count(g, e.c)
	change()
	after := brute.Count(g, e.c)
	undo()
	diff(before, after, emit)
}

func diff(before, after *delta.Vectors, emit delta.Emit) {
	for x := 0; x < after.NumNodes(); x++ {
		for o := 0; o < after.NumOrbits(); o++ {
			if d := int64(after.Get(uint32(x), o)) - int64(before.Get(uint32(x), o)); d != 0 {
				emit(uint32(x), o, d)
			}
		}
	}
}

func mustCatalog(t testing.TB, kind delta.Kind, k int) *catalog.Catalog {
	c, err := catalog.New(kind, k)
	if err != nil {
		t.Fatal(err)
	}
	return c
}

// TestSuiteOnRecompute runs the whole suite on the recompute engine, which
// must pass, on every supported catalog.
func TestSuiteOnRecompute(t *testing.T) {
	for _, tc := range []struct {
		kind delta.Kind
		k    int
	}{{delta.Undirected, 3}, {delta.Undirected, 4}, {delta.Undirected, 5}, {delta.Directed, 3}, {delta.Directed, 4}, {delta.Signed, 3}, {delta.Signed, 4}} {
		t.Run(fmt.Sprintf("%v-%d", tc.kind, tc.k), func(t *testing.T) {
			Run(t, Subject{Name: "recompute", Engine: recompute{mustCatalog(t, tc.kind, tc.k)}})
		})
	}
}

// dropOrbit is a deliberately wrong engine: it loses every change of one
// orbit.
type dropOrbit struct {
	recompute
	orbit int
}

func (e dropOrbit) Insert(g *delta.Graph, u, v uint32, emit delta.Emit) {
	e.recompute.Insert(g, u, v, func(x uint32, o int, d int64) {
		if o != e.orbit {
			emit(x, o, d)
		}
	})
}

func (e dropOrbit) InsertSigned(g *delta.Graph, u, v uint32, neg bool, emit delta.Emit) {
	e.recompute.InsertSigned(g, u, v, neg, func(x uint32, o int, d int64) {
		if o != e.orbit {
			emit(x, o, d)
		}
	})
}

func (e dropOrbit) Delete(g *delta.Graph, u, v uint32, emit delta.Emit) {
	e.recompute.Delete(g, u, v, func(x uint32, o int, d int64) {
		if o != e.orbit {
			emit(x, o, d)
		}
	})
}

// leaky is a deliberately wrong engine: it forgets to unlink the edge it
// linked to look at G′.
type leaky struct{ recompute }

func (e leaky) Insert(g *delta.Graph, u, v uint32, emit delta.Emit) {
	e.recompute.Insert(g, u, v, emit)
	g.Link(u, v)
}

// recorder stands in for testing.TB so a test can watch the suite fail:
// Fatalf records the message and ends the goroutine as testing does.
type recorder struct {
	testing.TB
	mu     sync.Mutex
	failed []string
}

func (r *recorder) Helper() {}
func (r *recorder) Errorf(format string, args ...any) {
	r.mu.Lock()
	defer r.mu.Unlock()
	r.failed = append(r.failed, fmt.Sprintf(format, args...))
}
func (r *recorder) Fatalf(format string, args ...any) {
	r.Errorf(format, args...)
	runtime.Goexit()
}
func (r *recorder) Fatal(args ...any)   { r.Fatalf("%s", fmt.Sprint(args...)) }
func (r *recorder) Logf(string, ...any) {}
func (r *recorder) Log(...any)          {}

// runRecorded runs the suite in its own goroutine against a recorder and
// returns the failures it recorded.
func runRecorded(t *testing.T, s Subject) []string {
	rec := &recorder{TB: t}
	done := make(chan struct{})
	go func() {
		defer close(done)
		Run(rec, s)
	}()
	<-done
	return rec.failed
}

// TestSuiteCatchesWrongEngines shows the suite fails wrong engines and
// names what went wrong.
func TestSuiteCatchesWrongEngines(t *testing.T) {
	cases := []struct {
		name   string
		engine delta.Engine
		want   string
	}{
		{"drops triangle changes", dropOrbit{recompute{mustCatalog(t, delta.Undirected, 4)}, 3}, "orbit 3 (triangle)"},
		{"drops 4-cycle changes", dropOrbit{recompute{mustCatalog(t, delta.Undirected, 4)}, 8}, "orbit 8 (4-cycle)"},
		{"drops a directed orbit", dropOrbit{recompute{mustCatalog(t, delta.Directed, 3)}, 19}, "orbit 19"},
		{"drops an unbalanced signed triangle", dropOrbit{recompute{mustCatalog(t, delta.Signed, 3)}, 10}, "orbit 10 (node between two positive ties of a triangle with 1 negative tie (unbalanced))"},
		{"drops a signed 4-cycle", dropOrbit{recompute{mustCatalog(t, delta.Signed, 4)}, 47}, "orbit 47"},
		{"leaves the edge linked", leaky{recompute{mustCatalog(t, delta.Undirected, 3)}}, "did not restore the graph"},
	}
	for _, tc := range cases {
		failed := runRecorded(t, Subject{Name: tc.name, Engine: tc.engine})
		if len(failed) == 0 {
			t.Errorf("%s: suite passed a wrong engine", tc.name)
			continue
		}
		t.Logf("%s: %s", tc.name, failed[0])
		if !strings.Contains(failed[0], tc.want) {
			t.Errorf("%s: failure %q does not mention %q", tc.name, failed[0], tc.want)
		}
	}
}

// TestSuiteCatchesWrongRecount shows a recount that disagrees fails too.
func TestSuiteCatchesWrongRecount(t *testing.T) {
	c := mustCatalog(t, delta.Undirected, 3)
	failed := runRecorded(t, Subject{Name: "bad recount", Engine: recompute{c}, Recount: offByOne{c}})
	if len(failed) == 0 || !strings.Contains(failed[0], "recount") {
		t.Fatalf("bad recount not caught: %q", failed)
	}
}

// offByOne recounts with brute and adds one to orbit 2 of node 0.
type offByOne struct{ c *catalog.Catalog }

func (r offByOne) Recount(g *delta.Graph) *delta.Vectors {
	v := brute.Count(g, r.c)
	if v.NumNodes() > 0 {
		v.Set(0, 2, v.Get(0, 2)+1)
	}
	return v
}

// TestReferenceChecksFail feeds the outside-reference checks vectors that
// are wrong in one count and demands the named check catches it, so a pass of
// the suite means the references were really compared.
func TestReferenceChecksFail(t *testing.T) {
	cases := []struct {
		kind        delta.Kind
		k           int
		node, orbit int
		by          uint64 // a multiple of the orbit size keeps orbit sums consistent
		want        string
	}{
		{delta.Undirected, 4, 0, 0, 1, "networkx.degree"},
		{delta.Undirected, 4, 2, 3, 1, "networkx.triangles"},
		{delta.Undirected, 4, 1, 2, 1, "C(d,2) − triangles"},
		{delta.Undirected, 4, 1, 1, 1, "Σ(d(w)−1) − 2·triangles"},
		{delta.Undirected, 4, 3, 8, 4, "igraph motifs_randesu"},
		{delta.Undirected, 4, 3, 6, 1, "consistent false"},
		{delta.Undirected, 5, 0, 46, 1, "igraph motifs_randesu class"},
		{delta.Directed, 3, 0, 0, 1, "networkx DiGraph.degree"},
		{delta.Directed, 3, 1, 19, 3, "networkx.triadic_census"},
		{delta.Directed, 3, 1, 32, 3, "igraph motifs_randesu"},
		{delta.Signed, 3, 4, 1, 1, "negative degree"},
		{delta.Signed, 3, 0, 0, 1, "positive degree"},
		{delta.Signed, 3, 1, 10, 1, "unbalanced triangles"},
		{delta.Signed, 3, 3, 12, 2, "balanced triangles"},
		{delta.Signed, 4, 3, 41, 4, "igraph motifs_randesu"},
	}
	// One Python process answers every case; each case's checks then run
	// against its own recorder.
	ref := &references{}
	recs := make([]*recorder, len(cases))
	var perCase [][]func()
	for i, tc := range cases {
		c := mustCatalog(t, tc.kind, tc.k)
		recs[i] = &recorder{TB: t}
		rp := newReplay(recs[i], Subject{Name: "perturbed"}, c, "hand graph", 6, ref)
		// A 4-cycle 0-1-2-3 with the chord 0-2 and arcs back 2→1 and 1→0
		// when directed; node 4 pays 0.
		for _, e := range [][2]uint32{{0, 1}, {1, 2}, {2, 3}, {3, 0}, {0, 2}, {2, 1}, {1, 0}, {4, 0}} {
			if tc.kind != delta.Directed && e[0] > e[1] && rp.g.HasEdge(e[1], e[0]) {
				continue
			}
			rp.g.Link(e[0], e[1])
		}
		if tc.kind == delta.Signed {
			// The chord and node 4's tie are negative: both triangles
			// are unbalanced.
			rp.g.SetMultiplicities(0, 2, 0, 1)
			rp.g.SetMultiplicities(4, 0, 0, 1)
		}
		v := brute.Count(rp.g, c)
		v.Set(uint32(tc.node), tc.orbit, v.Get(uint32(tc.node), tc.orbit)+tc.by)
		from := len(ref.checks)
		if !strings.HasPrefix(tc.want, "igraph") && tc.want != "consistent false" {
			rp.queueCheckpoint(v)
		}
		rp.queueMotifs(v)
		perCase = append(perCase, ref.checks[from:])
	}
	if err := ref.batch.Run(); err != nil {
		t.Fatal(err)
	}
	for i, tc := range cases {
		done := make(chan struct{})
		go func() {
			defer close(done)
			for _, check := range perCase[i] {
				check()
			}
		}()
		<-done
		if failed := recs[i].failed; len(failed) == 0 || !strings.Contains(failed[0], tc.want) {
			t.Errorf("%v k=%d, node %d orbit %d raised by %d: failures %q, want one citing %s", tc.kind, tc.k, tc.node, tc.orbit, tc.by, failed, tc.want)
		}
	}
}

// TestUnsignedFoldCatches feeds checkUnsigned signed vectors wrong in one
// count: raised (the unsigned sums no longer match the undirected brute
// count), or moved to another signed orbit of the same shape (they still
// match, which is caught only while no tie is negative).
func TestUnsignedFoldCatches(t *testing.T) {
	c := mustCatalog(t, delta.Signed, 4)
	for _, tc := range []struct {
		from, to int
		negative bool
		want     string
	}{{-1, 12, true, "undirected brute"}, {9, 12, true, ""}, {9, 12, false, "no negative tie"}} {
		rec := &recorder{TB: t}
		rp := newReplay(rec, Subject{Name: "perturbed"}, c, "hand graph", 5, &references{})
		for _, e := range [][2]uint32{{0, 1}, {1, 2}, {2, 0}, {2, 3}} {
			rp.g.Link(e[0], e[1])
		}
		if tc.negative {
			rp.g.SetMultiplicities(2, 3, 0, 1)
		}
		v := brute.Count(rp.g, c)
		if tc.from >= 0 {
			v.Set(0, tc.from, v.Get(0, tc.from)-1)
		}
		v.Set(0, tc.to, v.Get(0, tc.to)+1)
		done := make(chan struct{})
		go func() {
			defer close(done)
			rp.checkUnsigned(v)
		}()
		<-done
		if failed := len(rec.failed) > 0; failed != (tc.want != "") || (failed && !strings.Contains(rec.failed[0], tc.want)) {
			t.Errorf("orbit %d → %d: failures %q, want %q", tc.from, tc.to, rec.failed, tc.want)
		}
	}
}
