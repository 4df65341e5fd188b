package bench

import (
	"fmt"
	"runtime"
	"time"

	"orbitwatch/bench/gen"
	"orbitwatch/delta"
)

// BuildGraph returns the multigraph of kind holding edges (each entry adds
// one to its edge's multiplicity). It panics on a self-loop: generators
// make none.
func BuildGraph(kind delta.Kind, edges []gen.Edge) *delta.Graph {
	g := delta.NewGraph(kind)
	g.Grow(gen.MaxNode(edges))
	for _, e := range edges {
		if _, err := g.Increment(e.U, e.V); err != nil {
			panic(fmt.Sprintf("bench: edge %v: %v", e, err))
		}
	}
	return g
}

// SimpleEdges returns the edges (Undirected) or arcs (Directed) of g whose
// multiplicity is exactly one: the ones whose churn changes the simple
// graph.
func SimpleEdges(g *delta.Graph) []gen.Edge {
	var out []gen.Edge
	g.ForEachEdge(func(u, v uint32, mult uint32) {
		if mult == 1 {
			out = append(out, gen.Edge{U: u, V: v})
		}
	})
	return out
}

// Net sums the orbit changes an engine emits: a nodes × orbits matrix of
// int64, so that the harness pays the memory traffic of applying every
// change without needing correct starting counts.
type Net struct {
	orbits int
	sum    []int64
	emits  int64
	emit   delta.Emit
}

// NewNet returns an all-zero matrix for nodes × orbits.
func NewNet(nodes, orbits int) *Net {
	n := &Net{orbits: orbits, sum: make([]int64, nodes*orbits)}
	n.emit = func(x uint32, o int, d int64) {
		n.sum[int(x)*n.orbits+o] += d
		n.emits++
	}
	return n
}

// Emits returns the number of changes received.
func (n *Net) Emits() int64 { return n.emits }

// Get returns the summed change of (x, o).
func (n *Net) Get(x uint32, o int) int64 { return n.sum[int(x)*n.orbits+o] }

// Zero reports whether every summed change is zero.
func (n *Net) Zero() bool {
	for _, s := range n.sum {
		if s != 0 {
			return false
		}
	}
	return true
}

// Apply applies one event to g, calling the engine when the simple graph
// changes (multiplicity 0→1 on Add, 1→0 on Remove). It returns the
// rejection of an invalid event (self-loop, remove of an absent edge).
func Apply(e delta.Engine, g *delta.Graph, ev gen.Event, net *Net) error {
	m := g.Multiplicity(ev.U, ev.V)
	if ev.Op == gen.Add {
		if m == 0 && ev.U != ev.V {
			g.Grow(int(max(ev.U, ev.V)) + 1)
			e.Insert(g, ev.U, ev.V, net.emit)
		}
		_, err := g.Increment(ev.U, ev.V)
		return err
	}
	if m == 1 {
		e.Delete(g, ev.U, ev.V, net.emit)
	}
	_, err := g.Decrement(ev.U, ev.V)
	return err
}

// Run is the outcome of applying a run of events.
type Run struct {
	Events  int
	Elapsed time.Duration
	Allocs  uint64 // heap allocations during the run
	Emits   int64  // orbit changes emitted
	// Adds and Removes split Events by op; AddTime and RemoveTime split
	// the time spent inside Apply the same way.
	Adds, Removes       int
	AddTime, RemoveTime time.Duration
}

// NsPerAdd is AddTime / Adds in nanoseconds.
func (r Run) NsPerAdd() float64 { return float64(r.AddTime.Nanoseconds()) / float64(r.Adds) }

// NsPerRemove is RemoveTime / Removes in nanoseconds.
func (r Run) NsPerRemove() float64 { return float64(r.RemoveTime.Nanoseconds()) / float64(r.Removes) }

// NsPerEvent is Elapsed / Events in nanoseconds.
func (r Run) NsPerEvent() float64 { return float64(r.Elapsed.Nanoseconds()) / float64(r.Events) }

// EventsPerSec is Events / Elapsed.
func (r Run) EventsPerSec() float64 { return float64(r.Events) / r.Elapsed.Seconds() }

// AllocsPerEvent is Allocs / Events.
func (r Run) AllocsPerEvent() float64 { return float64(r.Allocs) / float64(r.Events) }

// EmitsPerEvent is Emits / Events.
func (r Run) EmitsPerEvent() float64 { return float64(r.Emits) / float64(r.Events) }

// Replay applies events to g in order with engine e, summing the changes
// into net, and measures the time and the heap allocations. Events must be
// valid for g (the churn and grow shapes are); Replay panics on a rejected
// one, which would mean the harness built a wrong stream.
func Replay(e delta.Engine, g *delta.Graph, events []gen.Event, net *Net) Run {
	var before, after runtime.MemStats
	runtime.ReadMemStats(&before)
	emits := net.emits
	var run Run
	t0 := time.Now()
	prev := t0
	for i, ev := range events {
		if err := Apply(e, g, ev, net); err != nil {
			panic(fmt.Sprintf("bench: event %d %+v: %v", i, ev, err))
		}
		now := time.Now()
		if ev.Op == gen.Add {
			run.Adds++
			run.AddTime += now.Sub(prev)
		} else {
			run.Removes++
			run.RemoveTime += now.Sub(prev)
		}
		prev = now
	}
	run.Elapsed = time.Since(t0)
	runtime.ReadMemStats(&after)
	run.Events, run.Allocs, run.Emits = len(events), after.Mallocs-before.Mallocs, net.emits-emits
	return run
}

// Recount times one full recount of g.
func Recount(r delta.Recounter, g *delta.Graph) (time.Duration, *delta.Vectors) {
	t0 := time.Now()
	v := r.Recount(g)
	return time.Since(t0), v
}

// RecountWithin times one full recount of g, waiting at most limit. When
// the recount has not finished by then it returns limit and false, and
// the recount goes on in the background until it ends (a Recounter cannot
// be stopped); callers only do this at the end of a process.
func RecountWithin(r delta.Recounter, g *delta.Graph, limit time.Duration) (time.Duration, bool) {
	done := make(chan time.Duration, 1)
	go func() {
		d, _ := Recount(r, g)
		done <- d
	}()
	select {
	case d := <-done:
		return d, true
	case <-time.After(limit):
		return limit, false
	}
}
