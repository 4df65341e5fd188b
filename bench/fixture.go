package bench

import (
	"fmt"
	"time"

	"orbitwatch/bench/gen"
	"orbitwatch/delta"
)

// Fixture is a benchmark graph with its churn stream.
type Fixture struct {
	Name  string
	Kind  delta.Kind
	Edges []gen.Edge // as generated; directed ones repeat arcs (multiplicity)
	Graph *delta.Graph
	// Churn removes and at once re-adds random edges of multiplicity one,
	// so each event changes the simple graph and each pair restores it.
	Churn []gen.Event
}

// BAFixture is the Barabási–Albert graph on n nodes with m edges per new
// node (gen.BarabasiAlbert) and churnSteps remove/re-add pairs.
func BAFixture(n, m int, seed uint64, churnSteps int) *Fixture {
	edges := gen.BarabasiAlbert(n, m, seed)
	return newFixture(fmt.Sprintf("ba-n%d-m%d", n, m), delta.Undirected, edges, churnSteps, seed)
}

// DirectedFixture is the graph of the directed payments stream of events
// events (gen.DefaultDirected) and churnSteps remove/re-add pairs.
func DirectedFixture(events int, seed uint64, churnSteps int) *Fixture {
	_, ev := gen.DirectedPayments(gen.DefaultDirected(events), seed)
	edges := make([]gen.Edge, len(ev))
	for i, e := range ev {
		edges[i] = gen.Edge{U: e.U, V: e.V}
	}
	return newFixture(fmt.Sprintf("directed-payments-%d", events), delta.Directed, edges, churnSteps, seed)
}

func newFixture(name string, kind delta.Kind, edges []gen.Edge, churnSteps int, seed uint64) *Fixture {
	g := BuildGraph(kind, edges)
	churn := gen.Churn(SimpleEdges(g), churnSteps, 0, 0, seed+1)
	return &Fixture{Name: name, Kind: kind, Edges: edges, Graph: g, Churn: churn}
}

// Describe returns "name: N nodes, E edges (or arcs), max degree D".
func (f *Fixture) Describe() string {
	maxDeg := 0
	for x := 0; x < f.Graph.NumNodes(); x++ {
		maxDeg = max(maxDeg, f.Graph.Degree(uint32(x)))
	}
	what := "edges"
	if f.Kind == delta.Directed {
		what = "arcs"
	}
	return fmt.Sprintf("%s: %d nodes, %d %s, max degree %d", f.Name, f.Graph.NumNodes(), f.Graph.NumEdges(), what, maxDeg)
}

// MeasureChurn applies events events of the fixture's churn stream (going
// round it as often as needed; rounded up to whole pairs, so the graph is
// left as it was) with engine c and returns the run.
func (f *Fixture) MeasureChurn(c Counter, events int) Run {
	e := c.Engine()
	net := NewNet(f.Graph.NumNodes(), e.NumOrbits())
	events += events % 2
	var total Run
	for total.Events < events {
		n := min(events-total.Events, len(f.Churn))
		r := Replay(e, f.Graph, f.Churn[:n], net)
		total.Events += r.Events
		total.Elapsed += r.Elapsed
		total.Allocs += r.Allocs
		total.Emits += r.Emits
		total.Adds += r.Adds
		total.Removes += r.Removes
		total.AddTime += r.AddTime
		total.RemoveTime += r.RemoveTime
	}
	if !net.Zero() {
		panic(fmt.Sprintf("bench: %s on %s: churn pairs did not sum to zero change", c.Name, f.Name))
	}
	return total
}

// Result is one counter measured on one fixture.
type Result struct {
	Fixture, Counter string
	Churn            Run
	// Recount is the time of the fixture's reference recount (RecountFor)
	// by the counter named Recounter.
	Recounter string
	Recount   time.Duration
	// RecountUnfinished: the recount did not end within its time limit;
	// Recount is the limit, a lower bound.
	RecountUnfinished bool
	// Networkx is the time of networkx.triangles on the same graph, zero
	// when not measured (directed graphs).
	Networkx time.Duration
}

// RecountPerEvent is the recount time over the time of one event: how
// many events cost as much as one recount.
func (r Result) RecountPerEvent() float64 {
	return float64(r.Recount.Nanoseconds()) / r.Churn.NsPerEvent()
}

// RecountPerNetworkx is the recount time over networkx.triangles' time;
// 0 when networkx was not measured.
func (r Result) RecountPerNetworkx() float64 {
	if r.Networkx == 0 {
		return 0
	}
	return r.Recount.Seconds() / r.Networkx.Seconds()
}
