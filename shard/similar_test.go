package shard

import (
	"context"
	"fmt"
	"math/rand/v2"
	"net/http"
	"slices"
	"sync"
	"testing"
	"time"

	"orbitwatch/delta"
	"orbitwatch/delta/gdv"
	"orbitwatch/storage"
	"orbitwatch/stream"
)

// similarByScan is the nearest-signature answer computed the slow,
// obvious way: every node's vector recounted statically from a's graph
// (c.Recount, a code path apart from the records the live index derives
// from), its distance to node q by Metric.Distance one node at a time,
// all sorted by (distance, id), the first k with at least minDegree
// neighbours, q left out.
func similarByScan(t testing.TB, c *Counting, m *gdv.Metric, a *Applier, q string, k, minDegree int) []SimilarNode {
	t.Helper()
	x, ok := a.Lookup(q)
	if !ok {
		t.Fatalf("reference: unknown node %q", q)
	}
	g := a.Graph()
	vecs := c.Recount.Recount(g)
	row := func(y uint32) []uint64 {
		if int(y) < vecs.NumNodes() {
			return vecs.Row(y)
		}
		return make([]uint64, c.Catalog.NumOrbits())
	}
	sx := m.Signature(nil, row(x))
	type cand struct {
		y     uint32
		d     float64
		terms []float64
	}
	var all []cand
	for y := range uint32(len(a.Names())) {
		if y == x || g.Degree(y) < minDegree {
			continue
		}
		terms := make([]float64, m.NumOrbits())
		d := m.Distance(sx, m.Signature(nil, row(y)), terms)
		all = append(all, cand{y, d, terms})
	}
	slices.SortFunc(all, func(p, q cand) int {
		if p.d != q.d {
			if p.d < q.d {
				return -1
			}
			return 1
		}
		return int(p.y) - int(q.y)
	})
	out := []SimilarNode{}
	for _, cd := range all[:min(k, len(all))] {
		out = append(out, SimilarNode{Node: a.Names()[cd.y], Distance: cd.d, Degree: g.Degree(cd.y), Orbits: gdv.Largest(cd.terms, SimilarOrbits)})
	}
	return out
}

func sameSimilar(got, want []SimilarNode) bool {
	if len(got) != len(want) {
		return false
	}
	for i := range got {
		g, w := got[i], want[i]
		if g.Node != w.Node || g.Distance != w.Distance || g.Degree != w.Degree || !slices.Equal(g.Orbits, w.Orbits) {
			return false
		}
	}
	return true
}

// sparseLog is a seeded log over n accounts without hubs: adds of random
// pairs until about 1.5·n edges are live, then churn (a live pair removed,
// or a new pair added), an event a second. Its small halos let a refresh
// derive a part of the nodes.
func sparseLog(n, events int, seed uint64) []stream.Event {
	r := rand.New(rand.NewPCG(seed, 17))
	t0 := time.Date(2026, 4, 1, 0, 0, 0, 0, time.UTC)
	var live [][2]string
	has := map[[2]string]bool{}
	out := make([]stream.Event, 0, events)
	for len(out) < events {
		e := stream.Event{TS: t0.Add(time.Duration(len(out)) * time.Second), HasTS: true}
		if len(live) > 3*n/2 || (len(live) > n && r.IntN(2) == 0) {
			k := r.IntN(len(live))
			e.Op, e.Src, e.Dst = stream.OpRemove, live[k][0], live[k][1]
			delete(has, live[k])
			live[k] = live[len(live)-1]
			live = live[:len(live)-1]
		} else {
			u, v := r.IntN(n), r.IntN(n)
			p := [2]string{fmt.Sprintf("n-%d", min(u, v)), fmt.Sprintf("n-%d", max(u, v))}
			if u == v || has[p] {
				continue
			}
			has[p] = true
			live = append(live, p)
			e.Src, e.Dst = p[0], p[1]
		}
		out = append(out, e)
	}
	return out
}

// runLive applies log in an applier that cuts every 64 positions, the
// live signatures hearing every cut, and after a random 1..40 events at a
// time asks check to compare answers. It returns how many refreshes
// derived only a part of the nodes.
func runLive(t *testing.T, c *Counting, l *LiveSignatures, log []stream.Event, check func(a *Applier, rl sync.Locker) bool) (partial int) {
	t.Helper()
	var mu sync.RWMutex
	a := NewApplier(c, 0, Cuts{Lines: 64})
	a.OnCut = func(cp *storage.Checkpoint) error { l.Cut(cp); return nil }
	r := rand.New(rand.NewPCG(3, 4))
	next := 1 + r.IntN(40)
	for i, ev := range log {
		mu.Lock()
		err := a.Apply(uint64(i+1), ev)
		mu.Unlock()
		if err != nil && !isReject(err) {
			t.Fatal(err)
		}
		if i+1 < next && i+1 < len(log) {
			continue
		}
		next = i + 2 + r.IntN(40)
		if !check(a, mu.RLocker()) {
			return -1
		}
		if !l.LastRefresh().Full {
			partial++
		}
	}
	return partial
}

// TestLiveSignaturesMatchRecount: at many points of a churning log, cut or
// not, the live index's answers for random nodes equal the slow scan over
// statically recounted vectors, to the bit, for every counter family
// (factored undirected, the 5-node vectors, directed and signed records);
// refreshes derive only the halo of the changed pairs some of the time.
func TestLiveSignaturesMatchRecount(t *testing.T) {
	for _, kc := range []struct {
		kind delta.Kind
		k    int
	}{{delta.Undirected, 4}, {delta.Undirected, 3}, {delta.Undirected, 5}, {delta.Directed, 3}, {delta.Signed, 3}} {
		t.Run(fmt.Sprintf("%v-%d", kc.kind, kc.k), func(t *testing.T) {
			c := mustCounting(t, kc.kind, kc.k)
			l := NewLiveSignatures(c)
			events := 2500
			if kc.k == 5 {
				events = 900
			}
			r := rand.New(rand.NewPCG(5, 6))
			checks := 0
			partial := runLive(t, c, l, sparseLog(1200, events, 1), func(a *Applier, rl sync.Locker) bool {
				names := a.Names()
				for range 2 {
					q := names[r.IntN(len(names))]
					k, minDeg := 1+r.IntN(12), r.IntN(3)
					got := l.Similar(a, rl, SimilarRequest{Node: q, K: k, MinDegree: minDeg})
					if got.Status != http.StatusOK || got.Seq != a.Seq() {
						t.Fatalf("%q at %d: status %d seq %d: %s", q, a.Seq(), got.Status, got.Seq, got.Error)
					}
					if want := similarByScan(t, c, l.Metric(), a, q, k, minDeg); !sameSimilar(got.Similar, want) {
						t.Fatalf("%q at %d (k=%d, min degree %d): live %+v\nscan %+v", q, a.Seq(), k, minDeg, got.Similar, want)
					}
					checks++
				}
				return true
			})
			if partial == 0 {
				t.Errorf("no refresh derived a part of the nodes: the halo walk went untested")
			}
			t.Logf("%d answers checked, %d partial refreshes", checks, partial)
			if got := l.Similar(NewApplier(c, 0, Cuts{}), &sync.Mutex{}, SimilarRequest{Node: "nobody", K: 3}); got.Status != http.StatusNotFound {
				t.Errorf("unknown node: status %d", got.Status)
			}
		})
	}
}

// TestLiveSignaturesShallowHaloFails: the same check catches a halo one
// step too shallow (a refresh that misses nodes two hops from a changed
// pair in the 2–4 node catalog), so the exactness above is not an
// accident of the log.
func TestLiveSignaturesShallowHaloFails(t *testing.T) {
	c := mustCounting(t, delta.Undirected, 4)
	l := NewLiveSignatures(c)
	l.depth = 1
	stale := false
	runLive(t, c, l, sparseLog(1200, 2500, 1), func(a *Applier, rl sync.Locker) bool {
		for _, q := range a.Names()[:40] {
			got := l.Similar(a, rl, SimilarRequest{Node: q, K: 5})
			if !sameSimilar(got.Similar, similarByScan(t, c, l.Metric(), a, q, 5, 0)) {
				stale = true
				return false
			}
		}
		return true
	})
	if !stale {
		t.Fatal("a halo of depth 1 went unnoticed")
	}
}

// TestWorkerSimilar runs a real worker on an embedded server and asks it
// for similar nodes now and as of a stored cut, against the slow scan over
// appliers of the same log (the whole log, and the log up to the cut).
func TestWorkerSimilar(t *testing.T) {
	srv := startServer(t)
	_, js := connect(t, srv.URL())
	const name, subject = "SIMLOG", "simlog.events"
	log := testLog(1500, 11)
	publishLog(t, js, name, subject, log)
	c := mustCounting(t, delta.Undirected, 4)
	ws := startWorkers(t, srv.URL(), name, subject, c, 0, 1, t.TempDir())
	defer ws[0].stop(t)
	last := lastSeq(t, js, name)
	waitApplied(t, ws, last)
	waitCommitted(t, ws, ws[0].w.Status().CutSeq)
	cps := ws[0].st.Checkpoints()
	if len(cps) < 3 {
		t.Fatalf("%d cuts stored, want several", len(cps))
	}
	cut := cps[len(cps)/2]

	now := applyLog(t, c, 0, Cuts{}, log, nil)
	then := applyLog(t, c, 0, Cuts{}, log[:cut.Seq], nil)
	m := ws[0].w.LiveSignatures().Metric()
	ctx := context.Background()
	for _, q := range []string{"shop-0", "acct-7", "acct-100", "acct-299"} {
		for _, c2 := range []struct {
			what string
			req  SimilarRequest
			a    *Applier
		}{
			{"now", SimilarRequest{Node: q, K: 8, MinDegree: 1}, now},
			{"seq", SimilarRequest{Node: q, K: 8, MinDegree: 1, Seq: cut.Seq + 1}, then},
			{"at", SimilarRequest{Node: q, K: 8, MinDegree: 2, At: cut.Watermark}, then},
		} {
			if _, ok := c2.a.Lookup(q); !ok {
				continue
			}
			got, err := ws[0].w.Similar(ctx, c2.req)
			if err != nil || got.Status != http.StatusOK {
				t.Fatalf("%s %q: %v, status %d: %s", c2.what, q, err, got.Status, got.Error)
			}
			if c2.what != "now" && (got.Seq != cut.Seq || !got.EventTime.Equal(cut.Watermark)) {
				t.Errorf("%s %q: read at %d %v, want the cut %d %v", c2.what, q, got.Seq, got.EventTime, cut.Seq, cut.Watermark)
			}
			want := similarByScan(t, c, m, c2.a, q, c2.req.K, c2.req.MinDegree)
			if !sameSimilar(got.Similar, want) {
				t.Fatalf("%s %q: worker %+v\nscan %+v", c2.what, q, got.Similar, want)
			}
		}
	}
	for _, c2 := range []struct {
		req  SimilarRequest
		want int
	}{
		{SimilarRequest{Node: "nobody", K: 3}, http.StatusNotFound},
		{SimilarRequest{Node: "nobody", K: 3, Seq: cut.Seq}, http.StatusNotFound},
		{SimilarRequest{Node: "acct-7", K: 3, Seq: 1}, http.StatusNotFound},
		{SimilarRequest{Node: "acct-7", K: 3, At: time.Date(2020, 1, 1, 0, 0, 0, 0, time.UTC)}, http.StatusNotFound},
	} {
		if got, _ := ws[0].w.Similar(ctx, c2.req); got.Status != c2.want {
			t.Errorf("%+v: status %d, want %d (%s)", c2.req, got.Status, c2.want, got.Error)
		}
	}
}
