package generic

import (
	"fmt"
	"math/rand/v2"
	"runtime"
	"sync"
	"testing"
	"time"

	"orbitwatch/delta"
	"orbitwatch/delta/undirected"
)

var (
	paymentsOnce [2]sync.Once
	payments     [2]*delta.Graph
	baOnce       sync.Once
	ba           *delta.Graph
)

// benchPayments returns the payments graph with merchant hubs (skewed) or
// without them, built once per test binary.
func benchPayments(skewed bool) *delta.Graph {
	i := 0
	if skewed {
		i = 1
	}
	paymentsOnce[i].Do(func() { payments[i] = paymentsGraph(1, skewed, payConsumers) })
	return payments[i]
}

func benchBA() *delta.Graph {
	baOnce.Do(func() { ba = baGraph(baNodes, baAttachments, 1) })
	return ba
}

// churn benchmarks eng on g by deleting a random present edge (arc) and
// inserting it again, two events per iteration, as the applier would: the
// engine runs before the graph changes. Emitted changes are summed into a
// checksum rather than a matrix so the figure is the engine's own cost.
// ns/event includes the bitmap updates of the graph; engine-ns/event is
// the time inside the engine calls alone; cpu-ns/event is the CPU time of
// the benchmark's thread (graph updates included), which stays put when
// other processes load the machine.
func churn(b *testing.B, g *delta.Graph, eng delta.Engine) {
	var list [][2]uint32
	rng := rand.New(rand.NewPCG(7, 7))
	g.ForEachEdge(func(u, v uint32, _ uint32) {
		if rng.IntN(g.NumEdges()/4096+1) == 0 {
			list = append(list, [2]uint32{u, v})
		}
	})
	rng.Shuffle(len(list), func(i, j int) { list[i], list[j] = list[j], list[i] })
	var emits, sum int64
	var inEngine time.Duration
	emit := func(x uint32, o int, d int64) {
		emits++
		sum += d * int64(x^uint32(o))
	}
	runtime.LockOSThread()
	defer runtime.UnlockOSThread()
	b.ReportAllocs()
	b.ResetTimer()
	cpu0 := threadCPU()
	for i := 0; b.Loop(); i++ {
		e := list[i%len(list)]
		t0 := time.Now()
		eng.Delete(g, e[0], e[1], emit)
		t1 := time.Now()
		g.Unlink(e[0], e[1])
		t2 := time.Now()
		eng.Insert(g, e[0], e[1], emit)
		inEngine += t1.Sub(t0) + time.Since(t2)
		g.Link(e[0], e[1])
	}
	cpu := threadCPU() - cpu0
	events := 2 * float64(b.N)
	b.ReportMetric(float64(cpu)/events, "cpu-ns/event")
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/events, "ns/event")
	b.ReportMetric(events/b.Elapsed().Seconds(), "events/s")
	b.ReportMetric(float64(inEngine.Nanoseconds())/events, "engine-ns/event")
	b.ReportMetric(float64(emits)/events, "emits/event")
	if sum != 0 {
		b.Fatalf("delete and re-insert did not cancel: checksum %d", sum)
	}
}

// BenchmarkDirected3 and BenchmarkDirected4 churn the payments graph with
// merchant hubs ("hubs") and with uniformly popular merchants ("flat").
func BenchmarkDirected3(b *testing.B) { benchDirected(b, 3) }

func BenchmarkDirected4(b *testing.B) { benchDirected(b, 4) }

func benchDirected(b *testing.B, k int) {
	cat := mustCatalog(b, delta.Directed, k)
	for _, skewed := range []bool{true, false} {
		shape := "flat"
		if skewed {
			shape = "hubs"
		}
		b.Run(shape+"/engine", func(b *testing.B) { churn(b, benchPayments(skewed), NewEngine(cat)) })
		b.Run(shape+"/enumerator", func(b *testing.B) { churn(b, benchPayments(skewed), NewEnumerator(cat)) })
	}
}

func BenchmarkUndirected4(b *testing.B) {
	cat := mustCatalog(b, delta.Undirected, 4)
	b.Run("generic-engine", func(b *testing.B) { churn(b, benchBA(), NewEngine(cat)) })
	b.Run("generic-enumerator", func(b *testing.B) { churn(b, benchBA(), NewEnumerator(cat)) })
	b.Run("specialised", func(b *testing.B) { churn(b, benchBA(), undirected.NewEngine(4)) })
}

// BenchmarkRecount times whole recounts on small graphs (ESU visits every
// connected set, so a hub alone costs about C(degree, k−1) visits), with
// the specialised undirected recount beside the generic one.
func BenchmarkRecount(b *testing.B) {
	run := func(name string, g *delta.Graph, r delta.Recounter) {
		b.Run(name, func(b *testing.B) {
			for b.Loop() {
				r.Recount(g)
			}
			b.ReportMetric(float64(g.NumEdges()), "edges")
		})
	}
	ba := baGraph(5_000, 3, 2)
	run("undirected-k4/ba-5k-m3/generic", ba, NewRecounter(mustCatalog(b, delta.Undirected, 4)))
	run("undirected-k4/ba-5k-m3/specialised", ba, undirected.NewRecounter(4))
	hubs, flat := paymentsGraph(2, true, 5_000), paymentsGraph(2, false, 5_000)
	for _, k := range []int{3, 4} {
		rec := NewRecounter(mustCatalog(b, delta.Directed, k))
		run(fmt.Sprintf("directed-k%d/payments-5k-hubs/generic", k), hubs, rec)
		run(fmt.Sprintf("directed-k%d/payments-5k-flat/generic", k), flat, rec)
	}
}
