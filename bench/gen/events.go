package gen

import "fmt"

// Op is what an event does to an edge's multiplicity.
type Op uint8

const (
	// Add raises the multiplicity by one.
	Add Op = iota
	// Remove lowers it by one.
	Remove
)

// String returns "add" or "remove", the words of the event-log format.
func (o Op) String() string {
	switch o {
	case Add:
		return "add"
	case Remove:
		return "remove"
	}
	return fmt.Sprintf("Op(%d)", uint8(o))
}

// Event is one edge event: at Unix (seconds, UTC), Op on {U,V} or U→V.
type Event struct {
	Unix int64
	Op   Op
	U, V uint32
}

// Grow returns one Add per edge, in order, the first at start and each one
// second after the previous: the "grow" shape (inserts only).
func Grow(edges []Edge, start int64) []Event {
	ev := make([]Event, len(edges))
	for i, e := range edges {
		ev[i] = Event{Unix: start + int64(i), Op: Add, U: e.U, V: e.V}
	}
	return ev
}

// Churn returns the "churn" shape on a graph holding edges: steps Remove
// events of random present edges, each edge re-added lag steps after its
// removal, and the edges still out re-added at the end, so the stream has
// 2·steps events and leaves the graph as it found it. With lag 0 every
// Remove is followed at once by the Add of the same edge. Events are one
// second apart from start.
//
// Preconditions: edges has no duplicates, 0 ≤ lag < len(edges).
func Churn(edges []Edge, steps, lag int, start int64, seed uint64) []Event {
	if lag < 0 || lag >= len(edges) {
		panic(fmt.Sprintf("gen: Churn lag %d outside 0..%d", lag, len(edges)-1))
	}
	r := newRand(seed)
	out := make([]bool, len(edges))
	removed := make([]int, 0, steps)
	ev := make([]Event, 0, 2*steps)
	t := start
	emit := func(op Op, i int) {
		ev = append(ev, Event{Unix: t, Op: op, U: edges[i].U, V: edges[i].V})
		t++
	}
	for s := 0; s < steps; s++ {
		i := r.IntN(len(edges))
		for out[i] {
			i = r.IntN(len(edges))
		}
		out[i] = true
		removed = append(removed, i)
		emit(Remove, i)
		if j := s - lag; j >= 0 {
			out[removed[j]] = false
			emit(Add, removed[j])
		}
	}
	for j := max(0, steps-lag); j < steps; j++ {
		out[removed[j]] = false
		emit(Add, removed[j])
	}
	return ev
}
