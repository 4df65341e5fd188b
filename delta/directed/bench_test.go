package directed

import (
	"fmt"
	"math/rand/v2"
	"runtime"
	"sync"
	"testing"
	"time"

	"orbitwatch/delta"
	"orbitwatch/delta/generic"
	"orbitwatch/delta/internal/cpuclock"
	"orbitwatch/delta/undirected"
)

// Sizes of the 2–3 benchmark: BA(100k, m=5) with random directions and
// 5 % reciprocal pairs; the merchant graph adds 20 % more arcs, every one
// from a distinct buyer into one merchant.
const (
	triadNodes   = 100_000
	triadM       = 5
	triadRecip   = 0.05
	triadShare   = 0.20
	churnSample  = 1 << 12
	triadSampleN = 1 << 14
)

type triadFixture struct {
	g        *delta.Graph
	c        delta.Counter
	sample   [][2]uint32 // arcs drawn uniformly
	toHub    [][2]uint32 // arcs into the merchant, when there is one
	hub      uint32
	backfill time.Duration
	arcs     int
}

var triadFixtures = map[string]*triadFixture{}

// loadMerchant builds (once per counter kind) the counter of the plain or
// merchant graph by inserting every arc, timing the backfill on the
// thread CPU clock.
func loadMerchant(b *testing.B, kind string, merchant bool, fresh func() delta.Counter) *triadFixture {
	key := fmt.Sprint(kind, merchant)
	if f := triadFixtures[key]; f != nil {
		return f
	}
	arcs := baArcs(triadNodes, triadM, 1, triadRecip)
	var hub uint32 = ^uint32(0)
	if merchant {
		arcs, hub = withMerchant(arcs, triadNodes, int(triadShare*float64(len(arcs))), 2)
	}
	f := &triadFixture{g: delta.NewGraph(delta.Directed), c: fresh(), arcs: len(arcs), hub: hub}
	clock := cpuclock.Start()
	if err := insertAll(f.c, f.g, arcs); err != nil {
		b.Fatal(err)
	}
	f.backfill = clock.Stop()
	f.c.Changed(func(uint32) {})
	rng := rand.New(rand.NewPCG(3, 3))
	for _, i := range rng.Perm(len(arcs))[:triadSampleN] {
		f.sample = append(f.sample, arcs[i])
	}
	for _, a := range arcs {
		if a[1] == hub && len(f.toHub) < triadSampleN {
			f.toHub = append(f.toHub, a)
		}
	}
	triadFixtures[key] = f
	return f
}

func loadTriads(b *testing.B, merchant bool) *triadFixture {
	return loadMerchant(b, "triads", merchant, func() delta.Counter { return NewTriads() })
}

// churnTriads deletes and re-inserts n arcs of sample from offset off, as
// the applier would (counter first, then the graph), and returns the
// thread CPU time and the allocations per event. With counter false only
// the graph changes: the applier's own share.
func churnTriads(b *testing.B, f *triadFixture, sample [][2]uint32, off, n int, counter bool) (time.Duration, float64) {
	var ms runtime.MemStats
	runtime.ReadMemStats(&ms)
	before := ms.Mallocs
	clock := cpuclock.Start()
	for i := range n {
		a := sample[(off+i)%len(sample)]
		if counter {
			if err := f.c.Delete(f.g, a[0], a[1]); err != nil {
				b.Fatal(err)
			}
		}
		f.g.Unlink(a[0], a[1])
		if counter {
			if err := f.c.Insert(f.g, a[0], a[1], false); err != nil {
				b.Fatal(err)
			}
		}
		f.g.Link(a[0], a[1])
	}
	t := clock.Stop()
	runtime.ReadMemStats(&ms)
	return t, float64(ms.Mallocs-before) / float64(2*n)
}

// BenchmarkTriads measures the 2–3 Counter per event, thread CPU time, on
// BA(100k, m=5) with random directions and 5 % reciprocal pairs, with and
// without 100k buyers (19 % more arcs) paying one merchant, in one run:
// the backfill (every arc inserted in order, buyers' payments spread among
// them), a churn of random arcs (delete and re-insert), and on the
// merchant graph a churn of arcs into the merchant alone. Churn figures
// are the counter's share: the same churn with graph updates alone is
// subtracted. merchant/plain is the ratio the issue sets at ≤ 2. The
// allocations are the whole churn's, graph updates included (Roaring
// allocates when a payer's last arc comes and goes; the counter alone
// allocates nothing, TestTriadsAllocateNothing).
func BenchmarkTriads(b *testing.B) {
	benchMerchant(b, loadTriads(b, false), loadTriads(b, true))
}

// BenchmarkQuadsMerchant is BenchmarkTriads for the 2–4 Counter, with the
// reads (Vector) of the merchant and of nodes by degree on the merchant
// graph beside.
func BenchmarkQuadsMerchant(b *testing.B) {
	fresh := func() delta.Counter { return NewQuads(0) }
	plain, merch := loadMerchant(b, "quads", false, fresh), loadMerchant(b, "quads", true, fresh)
	benchMerchant(b, plain, merch)
	var buf []uint64
	var err error
	clock := cpuclock.Start()
	if buf, err = merch.c.Vector(merch.hub, buf); err != nil {
		b.Fatal(err)
	}
	b.ReportMetric(float64(clock.Stop().Microseconds()), "read-merchant-µs")
	for i, xs := range readSample(merch.g, 32, 7) {
		if len(xs) == 0 {
			continue
		}
		clock := cpuclock.Start()
		for _, x := range xs {
			if buf, err = merch.c.Vector(x, buf); err != nil {
				b.Fatal(err)
			}
		}
		b.ReportMetric(float64(clock.Stop().Microseconds())/float64(len(xs)), "read-"+degreeBuckets[i].name+"-µs")
	}
}

func benchMerchant(b *testing.B, plain, merch *triadFixture) {
	var tPlain, tMerch, tHub time.Duration
	var allocs float64
	off := 0
	churn := func(f *triadFixture, sample [][2]uint32) time.Duration {
		t, a := churnTriads(b, f, sample, off, churnSample, true)
		allocs = max(allocs, a)
		g, _ := churnTriads(b, f, sample, off, churnSample, false)
		return t - g
	}
	for b.Loop() {
		tPlain += churn(plain, plain.sample)
		tMerch += churn(merch, merch.sample)
		tHub += churn(merch, merch.toHub)
		off += churnSample
	}
	events := float64(2 * churnSample * b.N)
	bf := func(f *triadFixture) float64 { return float64(f.backfill.Nanoseconds()) / float64(f.arcs) }
	b.ReportMetric(bf(plain), "backfill-plain-ns/event")
	b.ReportMetric(bf(merch), "backfill-merchant-ns/event")
	b.ReportMetric(bf(merch)/bf(plain), "backfill-merchant/plain")
	b.ReportMetric(float64(tPlain.Nanoseconds())/events, "churn-plain-ns/event")
	b.ReportMetric(float64(tMerch.Nanoseconds())/events, "churn-merchant-ns/event")
	b.ReportMetric(float64(tHub.Nanoseconds())/events, "churn-into-merchant-ns/event")
	b.ReportMetric(float64(tMerch)/float64(tPlain), "churn-merchant/plain")
	b.ReportMetric(allocs, "max-allocs/event")
}

// recountGraphs returns the graphs of the recount benchmark, built once:
// BA(100k, m=5) with random directions and 5 % reciprocal pairs, the same
// with a merchant paid by every node, and the directed payments scenario
// of bench/gen at 600k events.
var recountGraphs = sync.OnceValue(func() []namedGraph {
	ba := baArcs(triadNodes, triadM, 1, triadRecip)
	merch, _ := withMerchant(ba, triadNodes, triadNodes, 2)
	return []namedGraph{
		{"ba100k", graphOf(ba)},
		{"ba100k+merchant", graphOf(merch)},
		{"payments600k", graphOf(paymentsArcs(600_000, 1))},
	}
})

type namedGraph struct {
	name string
	g    *delta.Graph
}

// BenchmarkRecount4 times the directed 2–4 recount against the undirected
// 2–4 recount (delta/undirected) of the same log, each arc an undirected
// edge, in one run per graph, wall time on all cores. directed/undirected
// is the ratio the issue sets at ≤ 10.
func BenchmarkRecount4(b *testing.B) {
	for _, ng := range recountGraphs() {
		b.Run(ng.name, func(b *testing.B) {
			u := underlying(ng.g)
			dir, und := NewRecounter(4), undirected.NewRecounter(4)
			var td, tu time.Duration
			for b.Loop() {
				t0 := time.Now()
				dir.Recount(ng.g)
				t1 := time.Now()
				und.Recount(u)
				td += t1.Sub(t0)
				tu += time.Since(t1)
			}
			b.ReportMetric(float64(ng.g.NumEdges()), "arcs")
			b.ReportMetric(td.Seconds()/float64(b.N), "directed-s")
			b.ReportMetric(tu.Seconds()/float64(b.N), "undirected-s")
			b.ReportMetric(float64(td)/float64(tu), "directed/undirected")
		})
	}
}

// recordSource serves precomputed vectors as eager records (and the
// graph's adjacency), so an eager counter can be restored to a graph's
// state without replaying it.
type recordSource struct {
	delta.Source
	vec *delta.Vectors
	buf []byte
}

func (s *recordSource) Record(x uint32) ([]byte, error) {
	if int(x) >= s.vec.NumNodes() {
		return nil, nil
	}
	s.buf = delta.AppendCounts(s.buf[:0], s.vec.Row(x))
	return s.buf, nil
}

// degreeBuckets are the endpoint degree classes the incremental figures
// are reported by: the larger endpoint's number of neighbours.
var degreeBuckets = []struct {
	name string
	max  int
}{{"le16", 16}, {"le128", 128}, {"le1k", 1024}, {"gt1k", 1 << 30}}

func bucketOf(d int) int {
	for i, b := range degreeBuckets {
		if d <= b.max {
			return i
		}
	}
	return len(degreeBuckets) - 1
}

// incrementalSample draws up to per arcs of g for each degree bucket of
// the larger endpoint, uniformly within the bucket.
func incrementalSample(g *delta.Graph, per int, seed uint64) [][][2]uint32 {
	var all [][2]uint32
	g.ForEachEdge(func(u, v uint32, _ uint32) { all = append(all, [2]uint32{u, v}) })
	rng := rand.New(rand.NewPCG(seed, 21))
	rng.Shuffle(len(all), func(i, j int) { all[i], all[j] = all[j], all[i] })
	out := make([][][2]uint32, len(degreeBuckets))
	for _, a := range all {
		b := bucketOf(max(g.Degree(a[0]), g.Degree(a[1])))
		if len(out[b]) < per {
			out[b] = append(out[b], a)
		}
	}
	return out
}

// churnBucket deletes and re-inserts every arc of arcs through c and g
// and returns the thread CPU time.
func churnBucket(b *testing.B, c delta.Counter, g *delta.Graph, arcs [][2]uint32) time.Duration {
	clock := cpuclock.Start()
	for _, a := range arcs {
		replayArc(b, c, g, a)
	}
	return clock.Stop()
}

// readSample draws up to per nodes of g for each degree bucket.
func readSample(g *delta.Graph, per int, seed uint64) [][]uint32 {
	rng := rand.New(rand.NewPCG(seed, 22))
	out := make([][]uint32, len(degreeBuckets))
	for _, x := range rng.Perm(g.NumNodes()) {
		d := g.Degree(uint32(x))
		if d == 0 {
			continue
		}
		if b := bucketOf(d); len(out[b]) < per {
			out[b] = append(out[b], uint32(x))
		}
	}
	return out
}

// BenchmarkIncremental4 measures directed 2–4 counting per event, thread
// CPU time, on the directed payments scenario of bench/gen (600k events:
// about 500k arcs, merchants with thousands of payers, payroll hubs), by
// the degree of the larger endpoint: each sampled arc is deleted and
// re-inserted (two events, graph updates included), through Quads and
// through the eager generic engine (delta.NewEager(generic.NewEngine)),
// which starts from the recount's vectors through Restore. Quads' reads
// (Vector) are timed by the degree of the node read; the eager engine's
// read is a copy of its stored vector.
func BenchmarkIncremental4(b *testing.B) {
	g := recountGraphs()[2].g
	sample := incrementalSample(g, 48, 5)
	nodes := readSample(g, 48, 6)
	eager := delta.NewEager(generic.NewEngine(mustCatalog(b, 4)))
	if err := eager.Restore(g, &recordSource{Source: delta.NewMemSource(g, eager), vec: NewRecounter(4).Recount(g)}); err != nil {
		b.Fatal(err)
	}
	quads := NewQuads(0)
	loaded := delta.NewGraph(delta.Directed)
	var arcs [][2]uint32
	g.ForEachEdge(func(u, v uint32, _ uint32) { arcs = append(arcs, [2]uint32{u, v}) })
	clock := cpuclock.Start()
	if err := insertAll(quads, loaded, arcs); err != nil {
		b.Fatal(err)
	}
	backfill := clock.Stop()
	quads.Changed(func(uint32) {})
	perEager := make([]time.Duration, len(degreeBuckets))
	perQuads := make([]time.Duration, len(degreeBuckets))
	perRead := make([]time.Duration, len(degreeBuckets))
	var buf []uint64
	// Quads' events and reads are repeated so that the thread clock,
	// which ticks in milliseconds on some kernels, sees them.
	const reps = 50
	for b.Loop() {
		for i, bucket := range sample {
			perEager[i] += churnBucket(b, eager, g, bucket)
			for range reps {
				perQuads[i] += churnBucket(b, quads, loaded, bucket)
			}
		}
		for i, xs := range nodes {
			clock := cpuclock.Start()
			for range reps / 10 {
				for _, x := range xs {
					var err error
					if buf, err = quads.Vector(x, buf); err != nil {
						b.Fatal(err)
					}
				}
			}
			perRead[i] += clock.Stop()
		}
	}
	us := func(d time.Duration, n int) float64 { return float64(d.Nanoseconds()) / 1e3 / float64(n*b.N) }
	b.ReportMetric(us(backfill, 1)*float64(b.N)/float64(len(arcs)), "quads-backfill-µs/event")
	for i, bk := range degreeBuckets {
		if n := len(sample[i]); n > 0 {
			b.ReportMetric(us(perEager[i], 2*n), "eager-"+bk.name+"-µs/event")
			b.ReportMetric(us(perQuads[i], 2*n*reps), "quads-"+bk.name+"-µs/event")
			b.ReportMetric(float64(perEager[i])/float64(perQuads[i])*reps, "eager/quads-"+bk.name)
		}
		if n := len(nodes[i]); n > 0 {
			b.ReportMetric(us(perRead[i], n*(reps/10)), "quads-read-"+bk.name+"-µs")
		}
	}
	eager.Changed(func(uint32) {})
	quads.Changed(func(uint32) {})
}
