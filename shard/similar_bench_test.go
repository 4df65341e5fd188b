package shard

import (
	"fmt"
	"math/rand/v2"
	"sync"
	"testing"
	"time"

	"orbitwatch/bench/gen"
	"orbitwatch/delta"
	"orbitwatch/storage"
	"orbitwatch/stream"
)

// baApplier applies the edges of BA(n, m) (bench/gen, seed 1) as adds,
// an event a millisecond from 2026-01-01, to an applier that cuts at the
// positions in cutAt, handing each cut to onCut.
func baApplier(b *testing.B, n, m int, cutAt []int, onCut func(*storage.Checkpoint) error) (*Applier, []gen.Edge) {
	b.Helper()
	c, err := NewCounting(delta.Undirected, 4)
	if err != nil {
		b.Fatal(err)
	}
	edges := gen.BarabasiAlbert(n, m, 1)
	a := NewApplier(c, 0, Cuts{})
	a.OnCut = onCut
	t0 := time.Date(2026, 1, 1, 0, 0, 0, 0, time.UTC)
	next := 0
	for i, e := range edges {
		ev := stream.Event{Op: stream.OpAdd, Src: fmt.Sprint("n", e.U), Dst: fmt.Sprint("n", e.V), TS: t0.Add(time.Duration(i) * time.Millisecond), HasTS: true}
		if err := a.Apply(uint64(i+1), ev); err != nil {
			b.Fatal(err)
		}
		if next < len(cutAt) && i+1 == cutAt[next] {
			if err := a.Cut(); err != nil {
				b.Fatal(err)
			}
			next++
		}
	}
	return a, edges
}

// BenchmarkLiveSignaturesBA200k measures what keeping the live index exact
// costs on BA(200k, m = 5) (999,985 edges, hubs of degree ~1,500): the
// first query (every vector derived, both cores), and a query after each
// of a few sizes of churn (random present edges removed and added again),
// where the refresh derives the halo of the changed pairs or, past half
// the nodes, every node. Reported per query: the time the applier's lock
// was held (refresh-ms), the vectors derived again (derived), and the
// whole query with the scan.
func BenchmarkLiveSignaturesBA200k(b *testing.B) {
	a, edges := baApplier(b, 200_000, 5, nil, nil)
	l := NewLiveSignatures(a.count)
	var mu sync.RWMutex
	query := func() {
		if r := l.Similar(a, mu.RLocker(), SimilarRequest{Node: "n12345", K: 20, MinDegree: 1}); r.Status != 200 {
			b.Fatal(r.Error)
		}
	}
	b.Run("first", func(b *testing.B) {
		for b.Loop() {
			l.sig = nil
			query()
		}
		b.ReportMetric(float64(l.LastRefresh().Took.Microseconds())/1e3, "refresh-ms")
		b.ReportMetric(float64(l.LastRefresh().Derived), "derived")
	})
	query()
	r := rand.New(rand.NewPCG(2, 3))
	seq := uint64(len(edges))
	for _, churn := range []int{0, 1, 10, 100, 1000} {
		b.Run(fmt.Sprintf("churn=%d", churn), func(b *testing.B) {
			var took time.Duration
			derived, full := 0, 0
			for b.Loop() {
				b.StopTimer()
				for range churn {
					e := edges[r.IntN(len(edges))]
					u, v := fmt.Sprint("n", e.U), fmt.Sprint("n", e.V)
					for _, op := range []stream.Op{stream.OpRemove, stream.OpAdd} {
						seq++
						if err := a.Apply(seq, stream.Event{Op: op, Src: u, Dst: v}); err != nil {
							b.Fatal(err)
						}
					}
				}
				b.StartTimer()
				query()
				took += l.LastRefresh().Took
				derived += l.LastRefresh().Derived
				if l.LastRefresh().Full {
					full++
				}
			}
			b.ReportMetric(float64(took.Microseconds())/1e3/float64(b.N), "refresh-ms")
			b.ReportMetric(float64(derived)/float64(b.N), "derived")
			b.ReportMetric(float64(full)/float64(b.N), "full")
		})
	}
}

// BenchmarkDriftBA200kFromStore measures GCD-11 between two checkpoints
// of BA(200k, m = 5) end to end from a Badger store: after 80% of the
// edges and after all of them, each state loaded whole (StateAt), every
// vector derived, profiled and compared (DriftAt).
func BenchmarkDriftBA200kFromStore(b *testing.B) {
	c, err := NewCounting(delta.Undirected, 4)
	if err != nil {
		b.Fatal(err)
	}
	st, err := storage.Open(b.TempDir(), storage.Settings{Kind: c.Catalog.Kind, MaxNodes: 4, NumOrbits: c.Catalog.NumOrbits()})
	if err != nil {
		b.Fatal(err)
	}
	defer st.Close()
	total := 999_985
	baApplier(b, 200_000, 5, []int{total * 4 / 5, total}, func(cp *storage.Checkpoint) error { return st.Commit(cp) })
	cps := st.Checkpoints()
	if len(cps) != 2 {
		b.Fatalf("%d checkpoints", len(cps))
	}
	b.Run("state", func(b *testing.B) {
		for b.Loop() {
			if _, _, err := StateAt(st, c, cps[1].Seq); err != nil {
				b.Fatal(err)
			}
		}
	})
	b.Run("profile", func(b *testing.B) {
		for b.Loop() {
			if _, _, err := ProfileAt(st, c, cps[1].Seq); err != nil {
				b.Fatal(err)
			}
		}
	})
	var d Drift
	b.Run("drift", func(b *testing.B) {
		for b.Loop() {
			if d, err = DriftAt(st, c, cps[0].Seq, cps[1].Seq); err != nil {
				b.Fatal(err)
			}
		}
	})
	b.Logf("GCD-11 between 80%% and 100%% of BA(200k, 5) from the store: %.4f over %d and %d nodes", d.GCD, d.A.Nodes, d.B.Nodes)
}
