package bench

import (
	"fmt"

	"orbitwatch/delta"
	"orbitwatch/delta/catalog"
	"orbitwatch/delta/generic"
	"orbitwatch/delta/undirected"
)

// Counter is one incremental engine with the recount it is measured
// against.
type Counter struct {
	// Name says which package counts which graphlets: "undirected/4" is
	// delta/undirected on 2–4 nodes, "generic/directed-3" delta/generic on
	// directed 2–3 nodes.
	Name      string
	Kind      delta.Kind
	MaxNodes  int
	Engine    func() delta.Engine
	Recounter func() delta.Recounter
}

// Counters returns the counters of one kind whose engines the benchmarks
// measure by default: for undirected graphs delta/undirected and
// delta/generic on 2–4 nodes, for directed ones delta/generic on 2–3
// nodes. Larger graphlets (undirected 5, directed 4) are left to
// CounterFor: one event near a hub of the benchmark graphs visits too many
// node sets for a benchmark run.
func Counters(kind delta.Kind) []Counter {
	if kind == delta.Undirected {
		return []Counter{CounterFor("undirected", delta.Undirected, 4), CounterFor("generic", delta.Undirected, 4)}
	}
	return []Counter{CounterFor("generic", delta.Directed, 3)}
}

// RecountFor returns the counter whose Recounter is the reference recount
// of a kind in the benchmarks: the fastest one there is. delta/undirected
// (2–4 nodes) for undirected graphs, delta/generic (directed 2–3 nodes)
// for directed ones. delta/generic's enumerating recount of undirected 2–4
// node graphlets visits every connected 4-node set, Σ_x C(deg x, 3) stars
// alone, which on a 200k-node BA graph takes far longer than a benchmark.
func RecountFor(kind delta.Kind) Counter {
	if kind == delta.Undirected {
		return CounterFor("undirected", delta.Undirected, 4)
	}
	return CounterFor("generic", delta.Directed, 3)
}

// CounterFor returns the counter of package pkg ("undirected" or
// "generic") for kind and graphlets on 2..maxNodes nodes. It panics on a
// combination that does not exist (a programmer error).
func CounterFor(pkg string, kind delta.Kind, maxNodes int) Counter {
	c := Counter{Kind: kind, MaxNodes: maxNodes}
	switch {
	case pkg == "undirected" && kind == delta.Undirected:
		c.Name = fmt.Sprintf("undirected/%d", maxNodes)
		c.Engine = func() delta.Engine { return undirected.NewEngine(maxNodes) }
		c.Recounter = func() delta.Recounter { return undirected.NewRecounter(maxNodes) }
	case pkg == "generic":
		cat, err := catalog.New(kind, maxNodes)
		if err != nil {
			panic(fmt.Sprintf("bench: %v", err))
		}
		c.Name = fmt.Sprintf("generic/%s-%d", kind, maxNodes)
		if kind == delta.Undirected {
			c.Name = fmt.Sprintf("generic/%d", maxNodes)
		}
		c.Engine = func() delta.Engine { return generic.NewEngine(cat) }
		c.Recounter = func() delta.Recounter { return generic.NewRecounter(cat) }
	default:
		panic(fmt.Sprintf("bench: no counter %q for %s graphs", pkg, kind))
	}
	return c
}
