package five_test

import (
	"fmt"
	"testing"

	"orbitwatch/bench"
	"orbitwatch/bench/gen"
	"orbitwatch/delta"
	"orbitwatch/delta/five"
)

func baGraph(b *testing.B, n int) *delta.Graph {
	b.Helper()
	return bench.BuildGraph(delta.Undirected, gen.BarabasiAlbert(n, 5, 1))
}

// BenchmarkRecount is one 73-orbit static recount of BA(n, m=5); the
// networkx.triangles ratio is printed by bench/cmd/fivebench.
func BenchmarkRecount(b *testing.B) {
	for _, n := range []int{2000, 20000} {
		g := baGraph(b, n)
		b.Run(fmt.Sprintf("ba%d", n), func(b *testing.B) {
			r := five.NewRecounter(five.Options{})
			for b.Loop() {
				if _, err := r.Count(g); err != nil {
					b.Fatal(err)
				}
			}
			b.ReportMetric(float64(g.NumEdges())*float64(b.N)/b.Elapsed().Seconds(), "edges/s")
		})
	}
}

// BenchmarkCounterEvent is five.Counter's per-event cost on BA(20k, m=5)
// churn without reads: what an event costs between cuts (the cut's
// recount is BenchmarkRecount).
func BenchmarkCounterEvent(b *testing.B) {
	g := baGraph(b, 20000)
	churn := gen.Churn(bench.SimpleEdges(g), 5000, 0, 0, 2)
	c := five.NewCounter(five.Options{})
	g.ForEachEdge(func(u, v uint32, _ uint32) { c.Insert(g, u, v, false) })
	b.ReportAllocs()
	i := 0
	for b.Loop() {
		e := churn[i%len(churn)]
		i++
		var err error
		if e.Op == gen.Add {
			if err = c.Insert(g, e.U, e.V, false); err == nil {
				_, err = g.Increment(e.U, e.V)
			}
		} else if err = c.Delete(g, e.U, e.V); err == nil {
			_, err = g.Decrement(e.U, e.V)
		}
		if err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkCounterCut is one cut of five.Counter on BA(20k, m=5): 1,000
// churn events, then Changed (the recount and the diff of the vectors).
func BenchmarkCounterCut(b *testing.B) {
	g := baGraph(b, 20000)
	churn := gen.Churn(bench.SimpleEdges(g), 5000, 0, 0, 2)
	c := five.NewCounter(five.Options{})
	g.ForEachEdge(func(u, v uint32, _ uint32) { c.Insert(g, u, v, false) })
	c.Changed(func(uint32) {})
	i := 0
	for b.Loop() {
		for range 1000 {
			e := churn[i%len(churn)]
			i++
			var err error
			if e.Op == gen.Add {
				if err = c.Insert(g, e.U, e.V, false); err == nil {
					_, err = g.Increment(e.U, e.V)
				}
			} else if err = c.Delete(g, e.U, e.V); err == nil {
				_, err = g.Decrement(e.U, e.V)
			}
			if err != nil {
				b.Fatal(err)
			}
		}
		c.Changed(func(uint32) {})
	}
}
