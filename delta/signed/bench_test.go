package signed

import (
	"fmt"
	"math/rand/v2"
	"runtime"
	"testing"
	"time"

	"orbitwatch/bench/gen"
	"orbitwatch/delta"
	"orbitwatch/delta/catalog"
	"orbitwatch/delta/factored"
	"orbitwatch/delta/generic"
	"orbitwatch/delta/internal/cpuclock"
)

// subject is one counter on its own graph, replaying an edge: removed and
// added again, two events.
type subject struct {
	name   string
	replay func(e [2]uint32)
	sample int // edges replayed per round
	cpu    time.Duration
	events int
}

// constSource serves every node the same record: counts all at 2^40.
type constSource struct{ rec []byte }

func (s constSource) Record(uint32) ([]byte, error)                   { return s.rec, nil }
func (constSource) Adjacent(uint32, []delta.Adj) ([]delta.Adj, error) { return nil, nil }
func (constSource) Linked(uint32, uint32) (delta.Link, error)         { return 0, nil }

// BenchmarkSignedVsUndirected measures, in one run, the CPU time per
// event (thread CPU; random present ties removed and added again with
// their sign) on a Barabási–Albert graph of 200,000 nodes, m = 5, a tenth
// of its ties negative, of the signed counters and of the undirected
// kind's on the same graph without signs:
//
//	signed 2–3      delta/signed (records)
//	undirected 2–3  delta/factored (records)
//	signed 2–4      delta.NewEager over delta/generic's engine (every changed count written)
//	undirected 2–4  delta/factored
//
// each with the change of its delta.Graph timed too, as the applier makes
// it (delta.ApplySigned for the signed kind).
//
// Rounds interleave the subjects so a busy machine slows them alike; the
// ratios signed/undirected are reported beside the times. The eager
// counter's vectors start at 2^40 each instead of the graph's counts (a
// recount of every connected 4-node set of this graph takes minutes): an
// event's work does not depend on the values. -short uses 20,000 nodes.
func BenchmarkSignedVsUndirected(b *testing.B) {
	n := 200_000
	if testing.Short() {
		n = 20_000
	}
	edges := gen.BarabasiAlbert(n, 5, 1)
	r := rand.New(rand.NewPCG(5, 10))
	neg := make([]bool, len(edges))
	gu, gs := delta.NewGraph(delta.Undirected), delta.NewGraph(delta.Signed)
	gu.Grow(gen.MaxNode(edges))
	gs.Grow(gen.MaxNode(edges))
	s3 := New()
	for i, e := range edges {
		neg[i] = r.IntN(10) == 0
		gu.Link(e.U, e.V)
		if _, err := delta.ApplySigned(gs, s3, e.U, e.V, neg[i], true); err != nil {
			b.Fatal(err)
		}
	}
	u3, u4 := factored.New(3), factored.New(4)
	u3.Load(gu)
	u4.Load(gu)
	gs4 := gs.Clone()
	cat, _ := catalog.New(delta.Signed, 4)
	s4 := delta.NewEager(generic.NewEngine(cat))
	counts := make([]uint64, cat.NumOrbits())
	for i := range counts {
		counts[i] = 1 << 40
	}
	if err := s4.Restore(gs4, constSource{delta.AppendCounts(nil, counts)}); err != nil {
		b.Fatal(err)
	}
	sample := make([][2]uint32, 0, 1<<12)
	for _, i := range r.Perm(len(edges))[:cap(sample)] {
		sample = append(sample, [2]uint32{edges[i].U, edges[i].V})
	}
	signedReplay := func(c delta.Counter, g *delta.Graph) func([2]uint32) {
		return func(e [2]uint32) {
			negative := g.Links(e[0], e[1])&delta.LinkNeg != 0
			if _, err := delta.ApplySigned(g, c, e[0], e[1], negative, false); err != nil {
				b.Fatal(err)
			}
			if _, err := delta.ApplySigned(g, c, e[0], e[1], negative, true); err != nil {
				b.Fatal(err)
			}
		}
	}
	factoredReplay := func(c *factored.Counter) func([2]uint32) {
		return func(e [2]uint32) {
			// The graph changes too, as in the applier.
			if c.Delete(gu, e[0], e[1]) != nil {
				b.Fatal("factored counter fault")
			}
			gu.Unlink(e[0], e[1])
			if c.Insert(gu, e[0], e[1], false) != nil {
				b.Fatal("factored counter fault")
			}
			gu.Link(e[0], e[1])
		}
	}
	subjects := []*subject{
		{name: "signed3", replay: signedReplay(s3, gs), sample: 1 << 12},
		{name: "undirected3", replay: factoredReplay(u3), sample: 1 << 12},
		{name: "signed4", replay: signedReplay(s4, gs4), sample: 1 << 7},
		{name: "undirected4", replay: factoredReplay(u4), sample: 1 << 12},
	}
	runtime.GC()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		for round := 0; round < 8; round++ {
			for _, s := range subjects {
				from := (round * s.sample / 8) % len(sample)
				part := sample[from : from+s.sample/8]
				clock := cpuclock.Start()
				for _, e := range part {
					s.replay(e)
				}
				s.cpu += clock.Stop()
				s.events += 2 * len(part)
			}
		}
	}
	b.StopTimer()
	ns := map[string]float64{}
	for _, s := range subjects {
		ns[s.name] = float64(s.cpu.Nanoseconds()) / float64(s.events)
		b.ReportMetric(ns[s.name], s.name+"-ns/event")
	}
	b.ReportMetric(ns["signed3"]/ns["undirected3"], "signed3/undirected3")
	b.ReportMetric(ns["signed4"]/ns["undirected4"], "signed4/undirected4")
	b.Log(fmt.Sprintf("BA %d nodes, %d ties (%d negative in the signed graph)", n, len(edges), countTrue(neg)))
}

func countTrue(xs []bool) int {
	n := 0
	for _, x := range xs {
		if x {
			n++
		}
	}
	return n
}
