package alert_test

import (
	"fmt"
	"testing"

	"orbitwatch/shard/alert"
)

// quietCut is a cut of n node changes under the default rules that fire
// nothing: stable degree-6 stars against an equal baseline.
func quietCut(n int) []alert.NodeChange {
	v := make([]uint64, 15)
	v[0], v[2], v[7] = 6, 15, 20
	out := make([]alert.NodeChange, n)
	for i := range out {
		out[i] = alert.NodeChange{Node: fmt.Sprintf("acct-%d", i), Degree: 6, Now: v, Baseline: v}
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

func BenchmarkEvaluate(b *testing.B) {
	cat := undirected4(b)
	for _, mode := range []alert.BaselineMode{alert.BaselineLookback, alert.BaselineDecayed} {
		b.Run(mode.String(), func(b *testing.B) {
			cfg := alert.DefaultConfig(cat)
			cfg.Baseline = mode
			ev := alert.New(cfg, cat)
			ncs := quietCut(1000)
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
