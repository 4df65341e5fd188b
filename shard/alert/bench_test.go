package alert_test

import (
	"fmt"
	"testing"

	"orbitwatch/delta"
	"orbitwatch/delta/catalog"
	"orbitwatch/shard/alert"
)

// quietCut is a cut of n node changes under the default rules that fire
// nothing: degree-6 star centres that gained one payee since a baseline
// of degree 5, the first 15 orbits' worth of counts set (the rest zero on
// both sides, as in a sparse vector).
func quietCut(n int) []alert.NodeChange { return quietCutOf(n, 15) }

func quietCutOf(n, orbits int) []alert.NodeChange {
	now, base := make([]uint64, orbits), make([]uint64, orbits)
	now[0], now[2], now[7] = 6, 15, 20
	base[0], base[2], base[7] = 5, 10, 10
	out := make([]alert.NodeChange, n)
	for i := range out {
		out[i] = alert.NodeChange{Node: fmt.Sprintf("acct-%d", i), Degree: 6, Now: now, Baseline: base}
	}
	return out
}

// TestEvaluateAllocatesNothingWhenQuiet: a cut that raises no alert and
// meets only known nodes allocates nothing (lookback and decayed).
func TestEvaluateAllocatesNothingWhenQuiet(t *testing.T) {
	cat := undirected4(t)
	for _, mode := range []alert.BaselineMode{alert.BaselineLookback, alert.BaselineDecayed} {
		cfg := alert.DefaultConfig(cat)
		cfg.Baseline = mode
		ev := alert.New(cfg, cat)
		ncs := quietCut(100)
		cut := alert.Cut{Seq: 1, EventTime: t0}
		ev.Evaluate(cut, ncs) // decayed: first sight makes the node states
		allocs := testing.AllocsPerRun(20, func() {
			cut.Seq++
			if got := ev.Evaluate(cut, ncs); got != nil {
				t.Fatalf("%v: a quiet cut raised %d alerts", mode, len(got))
			}
		})
		if allocs != 0 {
			t.Errorf("%v: %v allocations per quiet cut, want 0", mode, allocs)
		}
	}
}

// BenchmarkEvaluate scores quiet cuts of 1000 nodes, per catalog and
// baseline mode; ns/node is the cost of one node change.
func BenchmarkEvaluate(b *testing.B) {
	for _, c := range []struct {
		kind delta.Kind
		k    int
	}{{delta.Undirected, 4}, {delta.Undirected, 5}, {delta.Directed, 4}} {
		cat, err := catalog.New(c.kind, c.k)
		if err != nil {
			b.Fatal(err)
		}
		for _, mode := range []alert.BaselineMode{alert.BaselineLookback, alert.BaselineDecayed} {
			b.Run(fmt.Sprintf("%v-%d/%v", c.kind, c.k, mode), func(b *testing.B) {
				cfg := alert.DefaultConfig(cat)
				cfg.Baseline = mode
				ev := alert.New(cfg, cat)
				ncs := quietCutOf(1000, cat.NumOrbits())
				cut := alert.Cut{Seq: 1, EventTime: t0}
				ev.Evaluate(cut, ncs)
				b.ReportAllocs()
				b.ResetTimer()
				for b.Loop() {
					cut.Seq++
					ev.Evaluate(cut, ncs)
				}
				b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N*len(ncs)), "ns/node")
			})
		}
	}
}
