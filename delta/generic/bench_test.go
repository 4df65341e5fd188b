package generic

import (
	"math/rand/v2"
	"sync"
	"testing"

	"orbitwatch/delta"
	"orbitwatch/delta/undirected"
)

var (
	paymentsOnce sync.Once
	payments     *delta.Graph
	baOnce       sync.Once
	ba           *delta.Graph
)

func benchPayments() *delta.Graph {
	paymentsOnce.Do(func() { payments = paymentsGraph(1) })
	return payments
}

func benchBA() *delta.Graph {
	baOnce.Do(func() { ba = baGraph(baNodes, baAttachments, 1) })
	return ba
}

// churn benchmarks eng on g by deleting a random present edge (arc) and
// inserting it again, two events per iteration, as the applier would: the
// engine runs before the graph changes. Emitted changes are summed into a
// checksum rather than a matrix so the figure is the engine's own cost.
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
	emit := func(x uint32, o int, d int64) {
		emits++
		sum += d * int64(x^uint32(o))
	}
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; b.Loop(); i++ {
		e := list[i%len(list)]
		eng.Delete(g, e[0], e[1], emit)
		g.Unlink(e[0], e[1])
		eng.Insert(g, e[0], e[1], emit)
		g.Link(e[0], e[1])
	}
	events := 2 * float64(b.N)
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/events, "ns/event")
	b.ReportMetric(events/b.Elapsed().Seconds(), "events/s")
	b.ReportMetric(float64(emits)/events, "emits/event")
	if sum != 0 {
		b.Fatalf("delete and re-insert did not cancel: checksum %d", sum)
	}
}

func BenchmarkDirected3(b *testing.B) {
	cat := mustCatalog(b, delta.Directed, 3)
	b.Run("engine", func(b *testing.B) { churn(b, benchPayments(), NewEngine(cat)) })
	b.Run("enumerator", func(b *testing.B) { churn(b, benchPayments(), NewEnumerator(cat)) })
}

func BenchmarkDirected4(b *testing.B) {
	cat := mustCatalog(b, delta.Directed, 4)
	b.Run("engine", func(b *testing.B) { churn(b, benchPayments(), NewEngine(cat)) })
	b.Run("enumerator", func(b *testing.B) { churn(b, benchPayments(), NewEnumerator(cat)) })
}

func BenchmarkUndirected4(b *testing.B) {
	cat := mustCatalog(b, delta.Undirected, 4)
	b.Run("generic-engine", func(b *testing.B) { churn(b, benchBA(), NewEngine(cat)) })
	b.Run("generic-enumerator", func(b *testing.B) { churn(b, benchBA(), NewEnumerator(cat)) })
	b.Run("specialised", func(b *testing.B) { churn(b, benchBA(), undirected.NewEngine(4)) })
}
