package bench

import (
	"flag"
	"runtime"
	"strings"
	"sync"
	"testing"
	"time"

	"orbitwatch/delta"
)

var (
	benchNodes = flag.Int("bench.nodes", 200000, "Barabási–Albert nodes of the benchmark graph")
	benchM     = flag.Int("bench.m", 5, "Barabási–Albert edges per new node")
	benchDir   = flag.Int("bench.directed-events", 1300000, "events of the directed payments benchmark stream (1,088,365 distinct arcs at 1.3M, seed 1)")
	benchSeed  = flag.Uint64("bench.seed", 1, "seed of the benchmark graphs")
	benchSteps = flag.Int("bench.churn", 50000, "remove/re-add pairs in each churn stream")
	// A recount that has not finished by then is reported as a lower
	// bound and left running; the process ends with the benchmarks.
	benchTimeout = flag.Duration("bench.recount-timeout", 5*time.Minute, "longest a benchmark waits for one recount")
)

var (
	fixturesOnce sync.Once
	fixtures     []*Fixture
)

// benchFixtures builds the benchmark graphs once per test binary.
func benchFixtures(b *testing.B) []*Fixture {
	fixturesOnce.Do(func() {
		fixtures = []*Fixture{
			BAFixture(*benchNodes, *benchM, *benchSeed, *benchSteps),
			DirectedFixture(*benchDir, *benchSeed, *benchSteps),
		}
	})
	for _, f := range fixtures {
		b.Log(f.Describe())
	}
	return fixtures
}

func metricName(s string) string { return strings.NewReplacer("/", "-", " ", "-").Replace(s) }

// BenchmarkChurn measures one edge event (a delete or an insert of an edge
// of multiplicity one) per op, for each engine on each benchmark graph.
func BenchmarkChurn(b *testing.B) {
	for _, f := range benchFixtures(b) {
		for _, c := range Counters(f.Kind) {
			b.Run(f.Name+"/"+metricName(c.Name), func(b *testing.B) {
				e := c.Engine()
				net := NewNet(f.Graph.NumNodes(), e.NumOrbits())
				i := 0
				b.ReportAllocs()
				var before, after runtime.MemStats
				runtime.ReadMemStats(&before)
				b.ResetTimer()
				for range b.N {
					if err := Apply(e, f.Graph, f.Churn[i], net); err != nil {
						b.Fatal(err)
					}
					if i++; i == len(f.Churn) {
						i = 0
					}
				}
				b.StopTimer()
				runtime.ReadMemStats(&after)
				b.ReportMetric(float64(after.Mallocs-before.Mallocs)/float64(b.N), "allocs/event")
				if i%2 == 1 { // finish the pair: leave the graph as it was
					if err := Apply(e, f.Graph, f.Churn[i], net); err != nil {
						b.Fatal(err)
					}
				}
				ns := float64(b.Elapsed().Nanoseconds()) / float64(b.N)
				b.ReportMetric(ns, "ns/event")
				b.ReportMetric(1e9/ns, "events/s")
				b.ReportMetric(float64(net.Emits())/float64(b.N), "changes/event")
			})
		}
	}
}

// BenchmarkRecount measures one full recount per op by the reference
// recount of each graph, and in the same run the per-event cost of each
// engine on a sample of the churn stream, reporting recount/event ratios.
// On the Barabási–Albert graph it also times networkx.triangles (networkx
// 2.8) and reports recount/networkx.
func BenchmarkRecount(b *testing.B) {
	for _, f := range benchFixtures(b) {
		rc := RecountFor(f.Kind)
		b.Run(f.Name+"/"+metricName(rc.Name), func(b *testing.B) {
			sample := make(map[string]Run)
			for _, c := range Counters(f.Kind) {
				sample[c.Name] = f.MeasureChurn(c, 2000)
			}
			var nx time.Duration
			if f.Kind == delta.Undirected {
				python, err := Python()
				if err != nil {
					b.Fatal(err)
				}
				if nx, _, err = NetworkxTriangles(python, f.Edges); err != nil {
					b.Fatal(err)
				}
			}
			r := rc.Recounter()
			b.ResetTimer()
			for range b.N {
				if _, ok := RecountWithin(r, f.Graph, *benchTimeout); !ok {
					b.ReportMetric(benchTimeout.Seconds(), "recount-s-at-least")
					b.Logf("recount of %s unfinished after %v", f.Name, *benchTimeout)
					return
				}
			}
			b.StopTimer()
			per := b.Elapsed().Seconds() / float64(b.N)
			b.ReportMetric(per, "recount-s")
			for name, run := range sample {
				b.ReportMetric(per*1e9/run.NsPerEvent(), "recount/event:"+metricName(name))
			}
			if nx > 0 {
				b.ReportMetric(nx.Seconds(), "networkx-s")
				b.ReportMetric(per/nx.Seconds(), "recount/networkx")
			}
		})
	}
}
