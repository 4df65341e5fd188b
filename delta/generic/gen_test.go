package generic

import (
	"math/rand/v2"

	"orbitwatch/delta"
)

// Shape of the directed payments scenario used by the benchmarks: with
// 300k consumers, about 1.1M arcs on 330k accounts.
const (
	payConsumers  = 300_000
	payPerBuyer   = 3    // merchants each consumer pays, on average
	payrollShare  = 0.5  // share of consumers paid by an employer
	refundShare   = 0.03 // share of purchases refunded (reverse arc)
	payZipfS      = 1.1  // merchant popularity: P(rank r) ∝ (r+payZipfV)^−s
	payZipfV      = 50
	baNodes       = 200_000
	baAttachments = 5
)

// paymentsGraph returns a seeded directed payments-like simple graph on
// consumers consumers, a tenth as many merchants and one employer per 1500
// consumers; with skewed false merchants are chosen uniformly (no merchant
// hubs; the payroll fan-out stays).
// Node ids: merchants 0..M−1, employers M..M+E−1, consumers after them.
// Each consumer pays 1..2·payPerBuyer−1 distinct merchants chosen by a Zipf
// law (a few merchants are paid by very many), half the consumers are paid
// by one employer (payroll fan-out from a few hubs), and a share of the
// purchases is refunded by an arc back from the merchant (a reciprocal
// pair). All of it is invented.
func paymentsGraph(seed uint64, skewed bool, consumers int) *delta.Graph {
	merchants, employers := consumers/10, max(1, consumers/1500)
	rng := rand.New(rand.NewPCG(seed, 0x9a7e))
	zipf := rand.NewZipf(rng, payZipfS, payZipfV, uint64(merchants-1))
	g := delta.NewGraph(delta.Directed)
	first := uint32(merchants + employers)
	g.Grow(int(first) + consumers)
	link := func(u, v uint32) {
		if !g.HasEdge(u, v) {
			g.Link(u, v)
		}
	}
	for c := first; c < first+uint32(consumers); c++ {
		for n := 1 + rng.IntN(2*payPerBuyer-1); n > 0; n-- {
			m := uint32(rng.IntN(merchants))
			if skewed {
				m = uint32(zipf.Uint64())
			}
			link(c, m)
			if rng.Float64() < refundShare {
				link(m, c)
			}
		}
		if rng.Float64() < payrollShare {
			link(uint32(merchants+rng.IntN(employers)), c)
		}
	}
	return g
}

// baGraph returns a seeded Barabási–Albert graph (Barabási & Albert 1999):
// each new node attaches to m distinct earlier nodes chosen with
// probability proportional to degree, starting from a clique on m+1 nodes.
func baGraph(n, m int, seed uint64) *delta.Graph {
	rng := rand.New(rand.NewPCG(seed, 0xba))
	g := delta.NewGraph(delta.Undirected)
	g.Grow(n)
	ends := make([]uint32, 0, 2*n*m)
	for u := 0; u <= m; u++ {
		for v := 0; v < u; v++ {
			g.Link(uint32(u), uint32(v))
			ends = append(ends, uint32(u), uint32(v))
		}
	}
	for u := uint32(m + 1); int(u) < n; u++ {
		for added := 0; added < m; {
			v := ends[rng.IntN(len(ends))]
			if v != u && !g.HasEdge(u, v) {
				g.Link(u, v)
				ends = append(ends, u, v)
				added++
			}
		}
	}
	return g
}
