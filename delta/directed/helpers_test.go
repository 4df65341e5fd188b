package directed

import (
	"math/rand/v2"
	"testing"

	"orbitwatch/bench/gen"
	"orbitwatch/delta"
)

// baArcs returns the edges of a Barabási–Albert graph on n nodes (bench/gen)
// each given a random direction, and with probability recip the reverse
// arc as well (a reciprocal pair).
func baArcs(n, m int, seed uint64, recip float64) [][2]uint32 {
	rng := rand.New(rand.NewPCG(seed, 0xd1))
	var arcs [][2]uint32
	for _, e := range gen.BarabasiAlbert(n, m, seed) {
		u, v := e.U, e.V
		if rng.IntN(2) == 0 {
			u, v = v, u
		}
		arcs = append(arcs, [2]uint32{u, v})
		if rng.Float64() < recip {
			arcs = append(arcs, [2]uint32{v, u})
		}
	}
	return arcs
}

// withMerchant returns arcs, in their order, with min(payers, n)
// distinct random nodes of 0..n−1 each paying one new node n, the
// merchant, at random places among them (buyers keep arriving while the
// graph grows).
func withMerchant(arcs [][2]uint32, n, payers int, seed uint64) ([][2]uint32, uint32) {
	rng := rand.New(rand.NewPCG(seed, 0x3e))
	m := uint32(n)
	buyers := rng.Perm(n)[:min(payers, n)]
	// Arc i of the result is a payment with probability
	// (payments left)/(arcs left), which spreads them evenly at random.
	out := make([][2]uint32, 0, len(arcs)+len(buyers))
	for len(arcs) > 0 || len(buyers) > 0 {
		if rng.IntN(len(arcs)+len(buyers)) < len(buyers) {
			out = append(out, [2]uint32{uint32(buyers[0]), m})
			buyers = buyers[1:]
		} else {
			out = append(out, arcs[0])
			arcs = arcs[1:]
		}
	}
	return out, m
}

// paymentsArcs returns the distinct arcs of the directed payments stream
// of bench/gen (our own scenario: consumers, merchants with Zipf
// popularity, payroll, refunds, transfers in groups) with events events.
func paymentsArcs(events int, seed uint64) [][2]uint32 {
	_, ev := gen.DirectedPayments(gen.DefaultDirected(events), seed)
	seen := map[[2]uint32]bool{}
	var arcs [][2]uint32
	for _, e := range ev {
		a := [2]uint32{e.U, e.V}
		if e.U != e.V && !seen[a] {
			seen[a] = true
			arcs = append(arcs, a)
		}
	}
	return arcs
}

// graphOf returns the directed graph of arcs.
func graphOf(arcs [][2]uint32) *delta.Graph {
	g := delta.NewGraph(delta.Directed)
	for _, a := range arcs {
		g.Grow(int(max(a[0], a[1])) + 1)
		if !g.HasEdge(a[0], a[1]) {
			g.Link(a[0], a[1])
		}
	}
	return g
}

// underlying returns the undirected graph of g: one edge per joined pair.
func underlying(g *delta.Graph) *delta.Graph {
	u := delta.NewGraph(delta.Undirected)
	u.Grow(g.NumNodes())
	g.ForEachEdge(func(a, b uint32, _ uint32) {
		if !u.HasEdge(a, b) {
			u.Link(a, b)
		}
	})
	return u
}

// insertAll replays arcs through c and g as the applier would: the
// counter before the graph, on simple-graph changes only.
func insertAll(c delta.Counter, g *delta.Graph, arcs [][2]uint32) error {
	for _, a := range arcs {
		g.Grow(int(max(a[0], a[1])) + 1)
		if g.HasEdge(a[0], a[1]) {
			continue
		}
		if err := c.Insert(g, a[0], a[1], false); err != nil {
			return err
		}
		g.Link(a[0], a[1])
	}
	return nil
}

// churnAllocs returns the allocations per delete and re-insert of the
// arcs of sample through c and g, runs times in turn.
func churnAllocs(t *testing.T, c delta.Counter, g *delta.Graph, sample [][2]uint32, runs int) float64 {
	i := 0
	return testing.AllocsPerRun(runs, func() {
		replayArc(t, c, g, sample[i%len(sample)])
		i++
	})
}

// replayArc deletes the arc a and inserts it again, counter before graph
// as the applier does: two events.
func replayArc(tb testing.TB, c delta.Counter, g *delta.Graph, a [2]uint32) {
	if err := c.Delete(g, a[0], a[1]); err != nil {
		tb.Fatal(err)
	}
	g.Unlink(a[0], a[1])
	if err := c.Insert(g, a[0], a[1], false); err != nil {
		tb.Fatal(err)
	}
	g.Link(a[0], a[1])
}
