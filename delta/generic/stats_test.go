package generic

import "testing"

// TestPaymentsGraphShape checks the benchmark scenario is what its comment
// promises: over a million arcs, merchant hubs, employer fan-out and
// reciprocal refund pairs.
func TestPaymentsGraphShape(t *testing.T) {
	g := paymentsGraph(1, true, payConsumers)
	var reciprocal int
	g.ForEachEdge(func(u, v uint32, _ uint32) {
		if u < v && g.HasEdge(v, u) {
			reciprocal++
		}
	})
	maxIn, maxOut := 0, 0
	for x := uint32(0); int(x) < g.NumNodes(); x++ {
		maxIn = max(maxIn, int(g.In(x).GetCardinality()))
		maxOut = max(maxOut, int(g.Out(x).GetCardinality()))
	}
	t.Logf("payments: %d nodes, %d arcs, %d reciprocal pairs, max in-degree %d, max out-degree %d",
		g.NumNodes(), g.NumEdges(), reciprocal, maxIn, maxOut)
	if g.NumEdges() < 1_000_000 || reciprocal == 0 || maxIn < 1000 || maxOut < 500 {
		t.Fatalf("payments graph lacks its promised shape")
	}
}
