package factored

import (
	"fmt"
	"math/rand/v2"
	"runtime"
	"slices"
	"sync"
	"testing"

	"github.com/RoaringBitmap/roaring/v2"

	"orbitwatch/delta"
	"orbitwatch/delta/undirected"
)

// The benchmark graph of DESIGN.md §7: Barabási–Albert, 200k nodes, m = 5,
// with a shuffled sample of its edges to delete and re-insert.
const (
	benchNodes  = 200_000
	benchAttach = 5
	benchSample = 1 << 14
	eagerSample = 1 << 11
)

var benchGraph = sync.OnceValues(func() (*delta.Graph, [][2]uint32) {
	g := baGraph(benchNodes, benchAttach, 2026)
	all := edgesOf(g)
	rng := rand.New(rand.NewPCG(2026, 12))
	rng.Shuffle(len(all), func(i, j int) { all[i], all[j] = all[j], all[i] })
	return g, all[:benchSample]
})

// benchCounter is loaded once and shared: every benchmark leaves the graph
// and the counts as it found them (each edge is deleted and re-inserted).
var benchCounter = sync.OnceValue(func() *Counter {
	g, sample := benchGraph()
	c := New(4)
	c.Load(g)
	for _, e := range sample {
		replay(c, g, e)
	}
	return c
})

// replay deletes and re-inserts e: two events.
func replay(c *Counter, g *delta.Graph, e [2]uint32) {
	c.Delete(g, e[0], e[1])
	g.Unlink(e[0], e[1])
	c.Insert(g, e[0], e[1])
	g.Link(e[0], e[1])
}

func mallocs() uint64 {
	var m runtime.MemStats
	runtime.ReadMemStats(&m)
	return m.Mallocs
}

// BenchmarkFactored measures, on the §7 graph, in one run:
//
//   - update: the factored update of random existing edges deleted and
//     re-inserted (two events per loop), by thread CPU time, with
//     allocations per event. The Counter keeps its own adjacency, so the
//     loop leaves g alone; the graph's own Unlink+Link cost, which a
//     service pays either way, is measured next (graph-cpu-ns/event). Then,
//     untimed by the benchmark but on the same clock, the eager engine
//     (undirected.NewEngine(4), changes summed into a dense nodes × orbits
//     matrix as an eager store would, with Unlink/Link) on the first 2,048
//     sample edges; eager/factored is its cost over factored + graph.
//   - vector-random and vector-halo: one Vector read of a uniform random
//     node, and of the halo nodes of recent events (Halo, with the
//     multiplicity a per-event checkpoint would read them).
//   - derive-all: a Vector read of every node, what a full export or a
//     recount substitute costs (one core).
//   - edge-triangles-by-intersection: what a halo read would add if
//     tri(x,y) were not kept but taken at read time as the intersection of
//     the graph's bitmaps (Roaring AndCardinality), for every y ∈ N(x).
//   - checkpoint/B: B replayed edges (2B events, graph included), then
//     Touched with a Vector read of every node it names: the whole cost
//     per event of a checkpoint that derives all touched nodes every 2B
//     events.
func BenchmarkFactored(b *testing.B) {
	g, sample := benchGraph()
	c := benchCounter()
	b.Run("update", func(b *testing.B) { benchUpdate(b, c, g, sample) })
	b.Run("vector-random", func(b *testing.B) {
		rng := rand.New(rand.NewPCG(1, 1))
		nodes := make([]uint32, 1<<16)
		var deg int
		for i := range nodes {
			nodes[i] = uint32(rng.IntN(benchNodes))
			deg += g.Degree(nodes[i])
		}
		benchReads(b, c, g, nodes)
		b.ReportMetric(float64(deg)/float64(len(nodes)), "mean-degree")
	})
	b.Run("vector-halo", func(b *testing.B) {
		var nodes []uint32
		halo := roaring.New()
		const events = 32
		for _, e := range sample[:events] {
			halo.Clear()
			c.Halo(g, e[0], e[1], halo)
			nodes = append(nodes, halo.ToArray()...)
		}
		benchReads(b, c, g, nodes)
		b.ReportMetric(float64(len(nodes))/events, "halo/event")
		sizes := make([]int, 0, 512)
		for _, e := range sample[:cap(sizes)] {
			halo.Clear()
			c.Halo(g, e[0], e[1], halo)
			sizes = append(sizes, int(halo.GetCardinality()))
		}
		slices.Sort(sizes)
		b.ReportMetric(float64(sizes[len(sizes)/2]), "halo-p50")
		b.ReportMetric(float64(sizes[len(sizes)*9/10]), "halo-p90")
		b.ReportMetric(float64(sizes[len(sizes)-1]), "halo-max")
	})
	b.Run("derive-all", func(b *testing.B) {
		buf := make([]uint64, 0, maxOrbits)
		clock := startClock()
		rounds := 0
		for b.Loop() {
			for x := range uint32(g.NumNodes()) {
				buf = c.Vector(g, x, buf)
			}
			rounds++
		}
		b.ReportMetric(clock.stop()*1e3/float64(rounds), "cpu-ms/all-nodes")
	})
	b.Run("edge-triangles-by-intersection", func(b *testing.B) {
		var nodes []uint32
		halo := roaring.New()
		for _, e := range sample[:32] {
			halo.Clear()
			c.Halo(g, e[0], e[1], halo)
			nodes = append(nodes, halo.ToArray()...)
		}
		clock := startClock()
		reads, sum := 0, 0
		for i := 0; b.Loop(); i++ {
			x := nodes[i%len(nodes)]
			g.Out(x).Iterate(func(y uint32) bool {
				sum += int(g.Out(x).AndCardinality(g.Out(y)))
				return true
			})
			reads++
		}
		cpu := clock.stop()
		b.ReportMetric(cpu*1e9/float64(reads), "extra-cpu-ns/read")
		if sum < 0 {
			b.Fatal("negative triangle sum")
		}
	})
	for _, batch := range []int{1, 64, 512, 4096, 65536} {
		b.Run(fmt.Sprintf("checkpoint/%d", batch), func(b *testing.B) {
			benchCheckpoint(b, c, g, sample, batch)
		})
	}
}

func benchUpdate(b *testing.B, c *Counter, g *delta.Graph, sample [][2]uint32) {
	b.ReportAllocs()
	m := mallocs()
	clock := startClock()
	loops := 0
	for i := 0; b.Loop(); i++ {
		e := sample[i%len(sample)]
		c.Delete(g, e[0], e[1])
		c.Insert(g, e[0], e[1])
		loops++
	}
	cpu := clock.stop()
	m = mallocs() - m
	events := float64(2 * loops)
	b.ReportMetric(events/cpu, "events/s")
	b.ReportMetric(cpu*1e9/events, "cpu-ns/event")
	b.ReportMetric(float64(m)/events, "allocs/event")

	clock = startClock()
	for _, e := range sample[:eagerSample] {
		g.Unlink(e[0], e[1])
		g.Link(e[0], e[1])
	}
	graphNs := clock.stop() * 1e9 / (2 * eagerSample)
	b.ReportMetric(graphNs, "graph-cpu-ns/event")

	eng := undirected.NewEngine(4)
	acc := make([]int64, g.NumNodes()*maxOrbits)
	emit := func(x uint32, o int, d int64) { acc[int(x)*maxOrbits+o] += d }
	eagerReplay := func(e [2]uint32) {
		eng.Delete(g, e[0], e[1], emit)
		g.Unlink(e[0], e[1])
		eng.Insert(g, e[0], e[1], emit)
		g.Link(e[0], e[1])
	}
	for _, e := range sample[eagerSample : eagerSample+64] {
		eagerReplay(e)
	}
	clock = startClock()
	for _, e := range sample[:eagerSample] {
		eagerReplay(e)
	}
	eagerNs := clock.stop() * 1e9 / (2 * eagerSample)
	b.ReportMetric(eagerNs, "eager-cpu-ns/event")
	b.ReportMetric(eagerNs/(cpu*1e9/events+graphNs), "eager/factored")
}

// benchReads times Vector over nodes, cycling.
func benchReads(b *testing.B, c *Counter, g *delta.Graph, nodes []uint32) {
	buf := make([]uint64, 0, maxOrbits)
	b.ReportAllocs()
	clock := startClock()
	reads := 0
	for i := 0; b.Loop(); i++ {
		buf = c.Vector(g, nodes[i%len(nodes)], buf)
		reads++
	}
	cpu := clock.stop()
	b.ReportMetric(cpu*1e9/float64(reads), "cpu-ns/read")
}

func benchCheckpoint(b *testing.B, c *Counter, g *delta.Graph, sample [][2]uint32, batch int) {
	buf := make([]uint64, 0, maxOrbits)
	var derivedNodes, events int
	var updateCPU float64
	read := func(x uint32) {
		buf = c.Vector(g, x, buf)
		derivedNodes++
	}
	c.Touched(func(uint32) {})
	clock := startClock()
	next := 0
	for b.Loop() {
		u := startClock()
		for range batch {
			replay(c, g, sample[next%len(sample)])
			next++
			events += 2
		}
		updateCPU += u.stop()
		c.Touched(read)
	}
	cpu := clock.stop()
	b.ReportMetric(float64(events)/cpu, "events/s")
	b.ReportMetric(cpu*1e9/float64(events), "cpu-ns/event")
	b.ReportMetric(updateCPU*1e9/float64(events), "update-cpu-ns/event")
	b.ReportMetric(float64(derivedNodes)/float64(events), "derived/event")
}
