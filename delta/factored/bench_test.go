package factored

import (
	"fmt"
	"math/rand/v2"
	"runtime"
	"slices"
	"testing"

	"orbitwatch/bench/gen"
	"orbitwatch/delta"
	"orbitwatch/delta/undirected"
)

// benchSample is the number of existing edges each update benchmark
// deletes and re-inserts; eagerSample the number the eager engine replays
// in the same run for the ratio.
const (
	benchSample = 1 << 14
	eagerSample = 1 << 10
)

// fixture is a loaded counter on a graph with a shuffled sample of its
// edges; benchmarks leave both as they found them.
type fixture struct {
	g      *delta.Graph
	c      *Counter
	sample [][2]uint32
}

var fixtures = map[string]*fixture{}

// loadFixture builds (once per name) the counter of edges on n nodes and
// draws a sample of edges uniformly.
func loadFixture(name string, edges []gen.Edge, seed uint64) *fixture {
	if f, ok := fixtures[name]; ok {
		return f
	}
	g := delta.NewGraph(delta.Undirected)
	g.Grow(gen.MaxNode(edges))
	for _, e := range edges {
		g.Link(e.U, e.V)
	}
	all := edgesOf(g)
	rng := rand.New(rand.NewPCG(seed, 12))
	rng.Shuffle(len(all), func(i, j int) { all[i], all[j] = all[j], all[i] })
	c := New(4)
	c.Load(g)
	f := &fixture{g: g, c: c, sample: all[:min(benchSample, len(all))]}
	fixtures[name] = f
	return f
}

// replay deletes and re-inserts e in the counter only: two events.
func replay(c *Counter, g *delta.Graph, e [2]uint32) {
	_ = c.Delete(g, e[0], e[1])
	_ = c.Insert(g, e[0], e[1], false)
}

func mallocs() uint64 {
	var m runtime.MemStats
	runtime.ReadMemStats(&m)
	return m.Mallocs
}

// perEvent returns the thread CPU nanoseconds per event of replaying
// edges (two events each), and allocations per event.
func perEvent(c *Counter, g *delta.Graph, edges [][2]uint32) (ns, allocs float64) {
	m := mallocs()
	clock := startClock()
	for _, e := range edges {
		replay(c, g, e)
	}
	cpu := clock.stop()
	return cpu * 1e9 / float64(2*len(edges)), float64(mallocs()-m) / float64(2*len(edges))
}

// BenchmarkUpdate measures the update cost per event (thread CPU time;
// random existing edges deleted and re-inserted) on Barabási–Albert graphs,
// in one run:
//
//   - ba-200k: BA(200k, m = 5), the graph of DESIGN.md §7, with the eager
//     engine of delta/undirected on the same graph for eager/factored
//     (its changes summed into a dense matrix as an eager store would);
//   - ba-200k+merchant: the same graph plus one merchant paid by 20 % extra
//     payments (≈126k customers), edges sampled uniformly, so one in six
//     events is a payment to the merchant; merchant/plain is the ratio of
//     the two per-event costs;
//   - ba-50k, ba-800k: the growth with graph size.
//
// Each reports cpu-ns/event, events/s, allocs/event and the per-event cost
// by the larger endpoint degree (≤16, ≤128, ≤1k, >1k).
func BenchmarkUpdate(b *testing.B) {
	plain := loadFixture("ba-200k", gen.BarabasiAlbert(200_000, 5, 2026), 1)
	b.Run("ba-200k", func(b *testing.B) {
		ns := benchUpdate(b, plain)
		eager := eagerPerEvent(plain.g, plain.sample[:eagerSample])
		b.ReportMetric(eager, "eager-cpu-ns/event")
		b.ReportMetric(eager/ns, "eager/factored")
	})
	b.Run("ba-200k+merchant", func(b *testing.B) {
		m := loadFixture("ba-200k+merchant", gen.WithMerchant(gen.BarabasiAlbert(200_000, 5, 2026), 200_000, 0.2, 7), 1)
		benchUpdate(b, m)
		// The ratio alternates the two graphs round by round, so that
		// both see the same machine and the same cache history.
		var withM, without float64
		for range 6 {
			n, _ := perEvent(m.c, m.g, m.sample)
			withM += n
			n, _ = perEvent(plain.c, plain.g, plain.sample)
			without += n
		}
		b.ReportMetric(float64(m.c.nodes[200_000].deg), "merchant-degree")
		b.ReportMetric(withM/without, "merchant/plain")
	})
	for _, n := range []int{50_000, 800_000} {
		b.Run(fmt.Sprintf("ba-%dk", n/1000), func(b *testing.B) {
			benchUpdate(b, loadFixture(fmt.Sprintf("ba-%dk", n/1000), gen.BarabasiAlbert(n, 5, 2026), 1))
		})
	}
}

// benchUpdate replays f's sample and reports the per-event figures; it
// returns cpu-ns/event.
func benchUpdate(b *testing.B, f *fixture) float64 {
	var ns, allocs float64
	rounds := 0
	for b.Loop() {
		n, a := perEvent(f.c, f.g, f.sample)
		ns, allocs = ns+n, allocs+a
		rounds++
	}
	ns, allocs = ns/float64(rounds), allocs/float64(rounds)
	b.ReportMetric(ns, "cpu-ns/event")
	b.ReportMetric(1e9/ns, "events/s")
	b.ReportMetric(allocs, "allocs/event")
	buckets := [][2]uint32{}
	for i, limit := range []int64{16, 128, 1024, 1 << 62} {
		buckets = buckets[:0]
		for _, e := range f.sample {
			d := max(f.c.nodes[e[0]].deg, f.c.nodes[e[1]].deg)
			if d <= limit && (i == 0 || d > []int64{0, 16, 128, 1024}[i]) {
				buckets = append(buckets, e)
			}
		}
		if len(buckets) == 0 {
			continue
		}
		bn, _ := perEvent(f.c, f.g, buckets)
		name := []string{"deg≤16", "deg≤128", "deg≤1k", "deg>1k"}[i]
		b.ReportMetric(bn, "cpu-ns/event-"+name)
		b.ReportMetric(float64(len(buckets))/float64(len(f.sample)), "share-"+name)
	}
	return ns
}

// eagerPerEvent replays edges through the eager engine of delta/undirected
// (with the graph's own Unlink/Link, which the eager engine needs) and
// returns thread CPU ns per event.
func eagerPerEvent(g *delta.Graph, edges [][2]uint32) float64 {
	eng := undirected.NewEngine(4)
	acc := make([]int64, g.NumNodes()*maxOrbits)
	emit := func(x uint32, o int, d int64) { acc[int(x)*maxOrbits+o] += d }
	clock := startClock()
	for _, e := range edges {
		eng.Delete(g, e[0], e[1], emit)
		g.Unlink(e[0], e[1])
		eng.Insert(g, e[0], e[1], emit)
		g.Link(e[0], e[1])
	}
	return clock.stop() * 1e9 / float64(2*len(edges))
}

// BenchmarkRead measures Vector on BA(200k, m = 5) with and without the
// merchant: a uniform random node, the nodes a checkpoint stores after a
// batch of events (Changed), and the merchant itself; and the number of
// changed records per event for batches of 1, 64 and 4,096 events.
func BenchmarkRead(b *testing.B) {
	for _, name := range []string{"ba-200k", "ba-200k+merchant"} {
		edges := gen.BarabasiAlbert(200_000, 5, 2026)
		if name != "ba-200k" {
			edges = gen.WithMerchant(edges, 200_000, 0.2, 7)
		}
		f := loadFixture(name, edges, 1)
		rng := rand.New(rand.NewPCG(1, 1))
		random := make([]uint32, 1<<14)
		for i := range random {
			random[i] = uint32(rng.IntN(200_000))
		}
		b.Run(name+"/random", func(b *testing.B) { benchReads(b, f.c, random) })
		b.Run(name+"/changed", func(b *testing.B) {
			f.c.Changed(func(uint32) {})
			for _, e := range f.sample[:256] {
				replay(f.c, f.g, e)
			}
			var changed []uint32
			f.c.Changed(func(x uint32) { changed = append(changed, x) })
			benchReads(b, f.c, changed)
			for _, batch := range []int{1, 64, 4096} {
				n := 0
				for _, e := range f.sample[:batch] {
					replay(f.c, f.g, e)
					f.c.Changed(func(uint32) { n++ })
				}
				b.ReportMetric(float64(n)/float64(2*batch), fmt.Sprintf("changed/event-batch%d", batch))
				n = 0
				for _, e := range f.sample[:batch] {
					replay(f.c, f.g, e)
				}
				f.c.Changed(func(uint32) { n++ })
				b.ReportMetric(float64(n)/float64(2*batch), fmt.Sprintf("changed-per-batch/event-batch%d", batch))
			}
		})
		if name != "ba-200k" {
			b.Run(name+"/merchant", func(b *testing.B) { benchReads(b, f.c, []uint32{200_000}) })
		}
	}
}

// benchReads times Vector over nodes, cycling, and reports the mean degree.
func benchReads(b *testing.B, c *Counter, nodes []uint32) {
	buf := make([]uint64, 0, maxOrbits)
	b.ReportAllocs()
	var deg int64
	for _, x := range nodes {
		deg += c.nodes[x].deg
	}
	clock := startClock()
	reads := 0
	for i := 0; b.Loop(); i++ {
		buf, _ = c.Vector(nodes[i%len(nodes)], buf)
		reads++
	}
	cpu := clock.stop()
	b.ReportMetric(cpu*1e9/float64(reads), "cpu-ns/read")
	b.ReportMetric(float64(deg)/float64(len(nodes)), "mean-degree")
	b.ReportMetric(float64(len(nodes)), "nodes")
	_ = slices.Max(nodes)
}
