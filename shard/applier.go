package shard

import (
	"errors"
	"fmt"
	"time"

	"orbitwatch/delta"
	"orbitwatch/storage"
	"orbitwatch/stream"
)

// Reasons an event is rejected by the applier, beyond delta's.
var (
	ErrLate   = errors.New("late: older than the window on arrival")
	ErrNoTime = errors.New("missing ts (a window is set)")
)

// Reject is a rejected event: it changed nothing.
type Reject struct {
	Seq    uint64
	Line   int
	Reason error
}

func (r *Reject) Error() string { return fmt.Sprintf("seq %d: %v", r.Seq, r.Reason) }
func (r *Reject) Unwrap() error { return r.Reason }

// Applier applies edge events in log order and keeps every node's orbit
// vector exact. It is not safe for concurrent use.
type Applier struct {
	count  *Counting
	graph  *delta.Graph
	vec    *delta.Vectors
	dict   *storage.Dict
	window *window
	edges  [][2]uint32 // pairs whose multiplicity changed since ResetTouched

	seq       uint64
	watermark time.Time

	touchMark []uint32 // touchMark[x] == touchEpoch when x was touched since the last Touched reset
	touched   []uint32
	epoch     uint32
	fault     error

	applied, expired uint64
	rejected         map[string]uint64
	emit             delta.Emit

	// computes, when set, says which simple-graph changes this applier
	// computes orbit changes for (the others only change the graph).
	computes func(u, v uint32) bool
}

// NewApplier returns an applier over an empty graph. A window of zero
// keeps every edge until it is removed.
func NewApplier(c *Counting, win time.Duration) *Applier {
	a := &Applier{
		count:    c,
		graph:    delta.NewGraph(c.Catalog.Kind),
		vec:      delta.NewVectors(0, c.Catalog.NumOrbits()),
		dict:     storage.NewDict(),
		rejected: make(map[string]uint64),
		epoch:    1,
	}
	if win > 0 {
		a.window = newWindow(win, c.Catalog.Kind)
	}
	a.emit = a.add
	return a
}

func (a *Applier) add(x uint32, o int, d int64) {
	if a.fault != nil {
		return
	}
	if err := a.vec.Add(x, o, d); err != nil {
		a.fault = fmt.Errorf("seq %d: %w", a.seq, err)
		return
	}
	if a.touchMark[x] != a.epoch {
		a.touchMark[x] = a.epoch
		a.touched = append(a.touched, x)
	}
}

// Apply applies the event at log position seq (seqs must increase). A
// rejected event returns a *Reject and changes nothing. Any other error is
// an invariant violation: the applier's state is no longer trustworthy and
// the caller must stop.
func (a *Applier) Apply(seq uint64, ev stream.Event) error {
	a.advance(seq, "Apply")
	if a.fault != nil {
		return a.fault
	}
	if a.window != nil && !ev.HasTS {
		return a.rejectWith(ev, ErrNoTime)
	}
	// Time passes with every event that carries it, accepted or not: the
	// expiries it makes due are applied before the event is judged.
	if ev.HasTS && ev.TS.After(a.watermark) {
		a.watermark = ev.TS
		if a.window != nil {
			if err := a.expire(); err != nil {
				return err
			}
		}
	}
	if err := a.check(ev); err != nil {
		return a.rejectWith(ev, err)
	}
	u, v := a.intern(ev.Src), a.intern(ev.Dst)
	var err error
	if ev.Op == stream.OpAdd {
		err = a.increment(u, v)
		if errors.Is(err, delta.ErrMultiplicity) {
			// Only a present edge can overflow, so both nodes were known
			// and interning changed nothing: the event is simply refused.
			return a.rejectWith(ev, err)
		}
		if err == nil && a.window != nil {
			a.window.push(ev.TS.Add(a.window.width), seq, u, v)
		}
	} else {
		err = a.decrement(u, v)
		if err == nil && a.window != nil {
			a.window.cancel(u, v)
		}
	}
	if err != nil {
		return err
	}
	a.applied++
	return a.fault
}

// RejectLine uses up log position seq for a line that did not decode to an
// event: it changes nothing but the position and the count of rejects by
// reason.
func (a *Applier) RejectLine(seq uint64, reason string) {
	a.advance(seq, "RejectLine")
	a.rejected[reason]++
}

// advance moves the log position to seq, which must be past it.
func (a *Applier) advance(seq uint64, caller string) {
	if seq <= a.seq {
		panic("shard: " + caller + " with a sequence that does not increase")
	}
	a.seq = seq
}

func (a *Applier) rejectWith(ev stream.Event, err error) error {
	a.rejected[err.Error()]++
	return &Reject{Seq: a.seq, Line: ev.Line, Reason: err}
}

// check decides, without changing anything, whether ev is rejected.
func (a *Applier) check(ev stream.Event) error {
	if a.window != nil && ev.Op == stream.OpAdd && !ev.TS.Add(a.window.width).After(a.watermark) {
		return ErrLate
	}
	if ev.Src == ev.Dst {
		return delta.ErrSelfLoop
	}
	if ev.Op == stream.OpRemove {
		u, ok1 := a.dict.Lookup(ev.Src)
		v, ok2 := a.dict.Lookup(ev.Dst)
		if !ok1 || !ok2 || !a.graph.HasEdge(u, v) {
			return delta.ErrAbsent
		}
	}
	return nil
}

// Route makes the applier a shard worker's: it computes the orbit changes
// only of simple-graph changes {u,v} with computes(u, v) true and hands
// them to emit instead of adding them to its own vectors; every event still
// changes the graph and the dictionary. The owner's side adds the changes
// it receives with AddDelta. Call Route before the first Apply.
func (a *Applier) Route(computes func(u, v uint32) bool, emit delta.Emit) {
	if computes == nil || emit == nil {
		panic("shard: Route needs both a partition and an emit")
	}
	a.computes, a.emit = computes, emit
}

// AddDelta adds d to count (x, o) and marks x touched: a routed orbit
// change arriving at the node's owner. x must be a known node. An error is
// an invariant violation (a count leaving the uint64 range): the caller
// must stop.
func (a *Applier) AddDelta(x uint32, o int, d int64) error {
	if int(x) >= a.dict.Len() {
		return fmt.Errorf("seq %d: orbit change for node %d, only %d known", a.seq, x, a.dict.Len())
	}
	a.add(x, o, d)
	return a.fault
}

// Pass uses up log position seq for a log message that is not an event (a
// control message): it changes nothing but the position.
func (a *Applier) Pass(seq uint64) { a.advance(seq, "Pass") }

// computesEdge reports whether this applier computes the change of {u,v}.
func (a *Applier) computesEdge(u, v uint32) bool {
	return a.computes == nil || a.computes(u, v)
}

func (a *Applier) increment(u, v uint32) error {
	if !a.graph.HasEdge(u, v) && a.computesEdge(u, v) {
		a.count.Engine.Insert(a.graph, u, v, a.emit)
	}
	if _, err := a.graph.Increment(u, v); err != nil {
		return err
	}
	a.edges = append(a.edges, [2]uint32{u, v})
	return nil
}

func (a *Applier) decrement(u, v uint32) error {
	if a.graph.Multiplicity(u, v) == 1 && a.computesEdge(u, v) {
		a.count.Engine.Delete(a.graph, u, v, a.emit)
	}
	if _, err := a.graph.Decrement(u, v); err != nil {
		return err
	}
	a.edges = append(a.edges, [2]uint32{u, v})
	return nil
}

// expire applies the window's removes whose expiry the watermark has reached.
func (a *Applier) expire() error {
	for {
		e, ok := a.window.pop(a.watermark)
		if !ok {
			return a.fault
		}
		if err := a.decrement(e.u, e.v); err != nil {
			return fmt.Errorf("seq %d: window expiry of add at seq %d: %w", a.seq, e.seq, err)
		}
		a.expired++
		if a.fault != nil {
			return a.fault
		}
	}
}

func (a *Applier) intern(id string) uint32 {
	x, isNew := a.dict.Intern(id)
	if isNew {
		a.graph.Grow(a.dict.Len())
		a.vec.Grow(a.dict.Len())
		a.touchMark = append(a.touchMark, 0)
	}
	return x
}

// Seq returns the last log position applied (accepted or rejected).
func (a *Applier) Seq() uint64 { return a.seq }

// Watermark returns the largest event time seen.
func (a *Applier) Watermark() time.Time { return a.watermark }

// Graph returns the current simple graph with multiplicities.
func (a *Applier) Graph() *delta.Graph { return a.graph }

// Vectors returns the current orbit vectors.
func (a *Applier) Vectors() *delta.Vectors { return a.vec }

// Counting returns the counters in use.
func (a *Applier) Counting() *Counting { return a.count }

// Names returns node names by dense id, in order of first appearance.
func (a *Applier) Names() []string {
	names := make([]string, a.dict.Len())
	for i := range names {
		names[i] = a.dict.Name(uint32(i))
	}
	return names
}

// Dict returns the node dictionary.
func (a *Applier) Dict() *storage.Dict { return a.dict }

// Lookup returns the dense id of a node name.
func (a *Applier) Lookup(id string) (uint32, bool) { return a.dict.Lookup(id) }

// ChangedEdges returns the pairs whose multiplicity changed since the last
// ResetTouched (with repeats).
func (a *Applier) ChangedEdges() [][2]uint32 { return a.edges }

// Touched returns the nodes whose vectors changed since the last
// ResetTouched, in order of first change.
func (a *Applier) Touched() []uint32 { return a.touched }

// ResetTouched starts a new touched set.
func (a *Applier) ResetTouched() {
	a.touched = a.touched[:0]
	a.edges = a.edges[:0]
	a.epoch++
}

// Stats are the applier's counters.
type Stats struct {
	Applied  uint64
	Expired  uint64
	Rejected map[string]uint64 // by reason
}

// Stats returns a copy of the applier's counters.
func (a *Applier) Stats() Stats {
	r := make(map[string]uint64, len(a.rejected))
	for k, n := range a.rejected {
		r[k] = n
	}
	return Stats{Applied: a.applied, Expired: a.expired, Rejected: r}
}
