package shard

import (
	"errors"
	"fmt"
	"slices"
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

// Cuts says where the state is committed: at every event-time boundary
// (a multiple of Every since the Unix epoch, UTC) the watermark crosses,
// and after every log position that is a multiple of Lines. Both are
// functions of the log alone, so a log gives the same cuts however it
// arrives. Zero values switch a rule off.
type Cuts struct {
	Every time.Duration
	Lines uint64
}

// DefaultCutEvery is the event-time spacing of cuts unless a command says
// otherwise; the README's performance section shows how it was chosen.
const DefaultCutEvery = time.Hour

// Applier applies edge events in log order to the graph and the counter's
// records, and hands a Checkpoint of what changed to OnCut at every cut.
// It is not safe for concurrent use.
type Applier struct {
	count   *Counting
	counter delta.Counter // nil: the graph alone (commands that recount)
	graph   *delta.Graph
	dict    *storage.Dict
	window  *window
	cuts    Cuts
	// OnCut, when set, receives every cut as it is taken: the applier's
	// state is then exactly the cut's (an event that crosses a boundary is
	// applied after OnCut returns). An error stops the applier.
	OnCut func(cp *storage.Checkpoint) error

	seq       uint64
	watermark time.Time
	lastCut   uint64
	named     int         // dictionary entries already in a cut
	pairs     [][2]uint32 // pairs whose multiplicity changed since the last cut
	records   []byte      // the last cut's records, reused
	fault     error

	applied, expired uint64
	rejected         map[string]uint64
}

// NewApplier returns an applier over an empty graph with c's counter (nil
// c.New: the graph alone). A window of zero keeps every edge until it is
// removed.
func NewApplier(c *Counting, win time.Duration, cuts Cuts) *Applier {
	a := &Applier{
		count:    c,
		graph:    delta.NewGraph(c.Catalog.Kind),
		dict:     storage.NewDict(),
		cuts:     cuts,
		rejected: make(map[string]uint64),
	}
	if c.New != nil {
		a.counter = c.New()
	}
	if win > 0 {
		a.window = newWindow(win, c.Catalog.Kind)
	}
	return a
}

// Apply applies the event at log position seq (seqs must increase). A
// rejected event returns a *Reject and changes nothing. Any other error is
// an invariant violation or a refusal of OnCut: the applier's state is no
// longer trustworthy and the caller must stop.
func (a *Applier) Apply(seq uint64, ev stream.Event) error {
	if err := a.before(seq, ev); err != nil {
		return err
	}
	if a.window != nil && !ev.HasTS {
		return a.after(a.rejectWith(ev, ErrNoTime))
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
		return a.after(a.rejectWith(ev, err))
	}
	u, v := a.intern(ev.Src), a.intern(ev.Dst)
	var err error
	if ev.Op == stream.OpAdd {
		err = a.increment(u, v, ev.Neg)
		if errors.Is(err, delta.ErrMultiplicity) {
			// Only a present edge can overflow, so both nodes were known
			// and interning changed nothing: the event is simply refused.
			return a.after(a.rejectWith(ev, err))
		}
		if err == nil && a.window != nil {
			a.window.push(ev.TS.Add(a.window.width), seq, u, v, ev.Neg && a.signed())
		}
	} else {
		err = a.decrement(u, v, ev.Neg)
		if err == nil && a.window != nil {
			a.window.cancel(u, v, ev.Neg && a.signed())
		}
	}
	if err != nil {
		return err
	}
	a.applied++
	return a.after(nil)
}

// RejectLine uses up log position seq for a line that did not decode to an
// event: it changes nothing but the position and the count of rejects by
// reason.
func (a *Applier) RejectLine(seq uint64, reason string) error {
	if err := a.before(seq, stream.Event{}); err != nil {
		return err
	}
	a.rejected[reason]++
	return a.after(nil)
}

// Pass uses up log position seq for a log message that is not an event (a
// control message): it changes nothing but the position.
func (a *Applier) Pass(seq uint64) error {
	if err := a.before(seq, stream.Event{}); err != nil {
		return err
	}
	return a.after(nil)
}

// before takes the cut an event-time boundary makes due (the state up to
// the previous position) and moves the log position to seq.
func (a *Applier) before(seq uint64, ev stream.Event) error {
	if seq <= a.seq {
		panic("shard: an applier was given a sequence that does not increase")
	}
	if a.fault != nil {
		return a.fault
	}
	if a.cuts.Every > 0 && ev.HasTS && a.seq > a.lastCut && !a.watermark.IsZero() && !ev.TS.Before(nextBoundary(a.watermark, a.cuts.Every)) {
		if err := a.cut(false); err != nil {
			return err
		}
	}
	a.seq = seq
	return nil
}

// after takes the cut a log-position multiple makes due, then returns err
// (a rejection) unless the cut failed.
func (a *Applier) after(err error) error {
	if a.cuts.Lines > 0 && a.seq%a.cuts.Lines == 0 {
		if cerr := a.cut(false); cerr != nil {
			return cerr
		}
	}
	return err
}

// nextBoundary returns the first multiple of every (from the Unix epoch)
// after t.
func nextBoundary(t time.Time, every time.Duration) time.Time {
	n := t.UnixNano()
	q := n / int64(every)
	if n < 0 && n%int64(every) != 0 {
		q--
	}
	return time.Unix(0, (q+1)*int64(every)).UTC()
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
		if p, n := a.graph.Multiplicities(u, v); a.signed() && (ev.Neg && n == 0 || !ev.Neg && p == 0) {
			return delta.ErrAbsent // the other sign keeps the pair
		}
	}
	return nil
}

func (a *Applier) increment(u, v uint32, neg bool) error {
	if a.signed() {
		return a.changeSigned(u, v, neg, true)
	}
	if !a.graph.HasEdge(u, v) && a.counter != nil {
		if err := a.counter.Insert(a.graph, u, v, neg); err != nil {
			a.fault = fmt.Errorf("seq %d: %w", a.seq, err)
			return a.fault
		}
	}
	if _, err := a.graph.Increment(u, v); err != nil {
		return err
	}
	a.pairs = append(a.pairs, [2]uint32{u, v})
	return nil
}

func (a *Applier) decrement(u, v uint32, neg bool) error {
	if a.signed() {
		return a.changeSigned(u, v, neg, false)
	}
	if a.graph.Multiplicity(u, v) == 1 && a.counter != nil {
		if err := a.counter.Delete(a.graph, u, v); err != nil {
			a.fault = fmt.Errorf("seq %d: %w", a.seq, err)
			return a.fault
		}
	}
	if _, err := a.graph.Decrement(u, v); err != nil {
		return err
	}
	a.pairs = append(a.pairs, [2]uint32{u, v})
	return nil
}

func (a *Applier) signed() bool { return a.graph.Kind() == delta.Signed }

// changeSigned adds (add) or removes one unit of the sign neg of {u,v} in
// a Signed graph through delta.ApplySigned, which calls the counter where
// the signed simple graph changes (a change of the pair's sign as a Delete
// and an Insert). A rejection is returned as it is; a counter error is a
// fault.
func (a *Applier) changeSigned(u, v uint32, neg, add bool) error {
	var c delta.Counter
	if a.counter != nil {
		c = a.counter
	}
	if _, err := delta.ApplySigned(a.graph, c, u, v, neg, add); err != nil {
		if errors.Is(err, delta.ErrMultiplicity) || errors.Is(err, delta.ErrAbsent) || errors.Is(err, delta.ErrSelfLoop) {
			return err
		}
		a.fault = fmt.Errorf("seq %d: %w", a.seq, err)
		return a.fault
	}
	a.pairs = append(a.pairs, [2]uint32{u, v})
	return nil
}

// expire applies the window's removes whose expiry the watermark has reached.
func (a *Applier) expire() error {
	for {
		e, ok := a.window.pop(a.watermark)
		if !ok {
			return nil
		}
		if err := a.decrement(e.u, e.v, e.neg); err != nil {
			return fmt.Errorf("seq %d: window expiry of add at seq %d: %w", a.seq, e.seq, err)
		}
		a.expired++
	}
}

func (a *Applier) intern(id string) uint32 {
	x, isNew := a.dict.Intern(id)
	if isNew {
		a.graph.Grow(a.dict.Len())
	}
	return x
}

// Cut hands OnCut the state change since the last cut as a flush
// Checkpoint at the current position (nothing when the position has not
// moved since): commands call it where their input ends, to make what was
// applied durable. Alert rules are not evaluated at a flush (see
// storage.Checkpoint.Flush).
func (a *Applier) Cut() error { return a.cut(true) }

// cut takes a cut: a flush, or one of the cut rules.
func (a *Applier) cut(flush bool) error {
	if a.seq == a.lastCut {
		return nil
	}
	cp := a.checkpoint()
	cp.Flush = flush
	a.lastCut = a.seq
	if a.OnCut == nil {
		return nil
	}
	if err := a.OnCut(cp); err != nil {
		a.fault = err
		return err
	}
	return nil
}

// checkpoint takes the change since the last cut out of the live state:
// the new names, the changed pairs with their multiplicity now, the
// changed records, and the window's keyed changes. Nothing in it aliases
// state the applier will change.
func (a *Applier) checkpoint() *storage.Checkpoint {
	cp := &storage.Checkpoint{Seq: a.seq, Watermark: a.watermark, Names: a.dict.From(a.named), Blobs: map[string][]byte{}}
	a.named = a.dict.Len()
	undirected := a.graph.Kind() != delta.Directed
	for i, e := range a.pairs {
		if undirected && e[0] > e[1] {
			a.pairs[i] = [2]uint32{e[1], e[0]}
		}
	}
	slices.SortFunc(a.pairs, func(x, y [2]uint32) int {
		if x[0] != y[0] {
			return int(x[0]) - int(y[0])
		}
		return int(x[1]) - int(y[1])
	})
	a.pairs = slices.Compact(a.pairs)
	cp.Edges = make([]storage.EdgeChange, len(a.pairs))
	for i, e := range a.pairs {
		p, n := a.graph.Multiplicities(e[0], e[1])
		cp.Edges[i] = storage.EdgeChange{U: e[0], V: e[1], Mult: p, Neg: n}
	}
	a.pairs = a.pairs[:0]
	if a.counter != nil {
		// One buffer holds every record of the cut; it is new for each
		// cut because the writer may still hold the last one's.
		var buf []byte
		var ends []int
		var nodes []uint32
		a.counter.Changed(func(x uint32) {
			buf = a.counter.AppendRecord(buf, x)
			ends = append(ends, len(buf))
			nodes = append(nodes, x)
		})
		cp.Records = make([]storage.RecordChange, len(nodes))
		from := 0
		for i, x := range nodes {
			cp.Records[i] = storage.RecordChange{Node: x, Data: buf[from:ends[i]:ends[i]]}
			from = ends[i]
		}
	}
	if a.window != nil {
		cp.Keyed = lastPerKey(a.window.takeChanges())
	}
	return cp
}

// lastPerKey keeps the last change of every key, in first-appearance
// order.
func lastPerKey(ch []storage.KeyedChange) []storage.KeyedChange {
	last := make(map[string]int, len(ch))
	for i, k := range ch {
		last[k.Key] = i
	}
	out := ch[:0]
	for i, k := range ch {
		if last[k.Key] == i {
			out = append(out, k)
		}
	}
	return out
}

// Seq returns the last log position applied (accepted or rejected).
func (a *Applier) Seq() uint64 { return a.seq }

// LastCut returns the position of the last cut taken.
func (a *Applier) LastCut() uint64 { return a.lastCut }

// Watermark returns the largest event time seen.
func (a *Applier) Watermark() time.Time { return a.watermark }

// Graph returns the current simple graph with multiplicities.
func (a *Applier) Graph() *delta.Graph { return a.graph }

// Counter returns the counter (nil for the graph alone).
func (a *Applier) Counter() delta.Counter { return a.counter }

// Counting returns the counters in use.
func (a *Applier) Counting() *Counting { return a.count }

// Vector appends node x's current orbit vector to dst[:0]. The applier
// must have a counter.
func (a *Applier) Vector(x uint32, dst []uint64) ([]uint64, error) {
	return a.counter.Vector(x, dst)
}

// Vectors returns every node's current orbit vector, by dense id.
func (a *Applier) Vectors() (*delta.Vectors, error) {
	v := delta.NewVectors(a.dict.Len(), a.count.Catalog.NumOrbits())
	var buf []uint64
	for x := range uint32(a.dict.Len()) {
		var err error
		if buf, err = a.counter.Vector(x, buf); err != nil {
			return nil, err
		}
		copy(v.Row(x), buf)
	}
	return v, nil
}

// Names returns node names by dense id, in order of first appearance.
func (a *Applier) Names() []string { return a.dict.From(0) }

// Dict returns the node dictionary.
func (a *Applier) Dict() *storage.Dict { return a.dict }

// Lookup returns the dense id of a node name.
func (a *Applier) Lookup(id string) (uint32, bool) { return a.dict.Lookup(id) }

// PendingExpiries returns the number of adds waiting for the window.
func (a *Applier) PendingExpiries() int {
	if a.window == nil {
		return 0
	}
	return a.window.pending()
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

// Follow moves the applier to the stored cut cc, the one after the
// applier's own position: it adds cc's names and sets every pair of
// cc.Edges to its multiplicities there, keeping the counter's records in
// step (delta.SetPair). It is how a second applier trails the first by
// whole cuts (the alert stage's baseline state) and how stored history is
// walked cut by cut without the log (re-evaluating rules). The window is
// not followed (the stored multiplicities already include its expiries),
// so a following applier has none; nor are cuts taken: the counter's
// changed set is dropped.
func (a *Applier) Follow(cc *storage.CutChanges) error {
	if a.window != nil || cc.Seq <= a.seq || a.fault != nil {
		panic("shard: Follow on an applier with a window, a fault, or at or past the cut")
	}
	if a.dict.Len()+len(cc.Names) != cc.Nodes {
		return fmt.Errorf("cut %d: %d names added to %d do not make its %d nodes", cc.Seq, len(cc.Names), a.dict.Len(), cc.Nodes)
	}
	for _, name := range cc.Names {
		a.intern(name)
	}
	a.seq, a.lastCut, a.watermark, a.named = cc.Seq, cc.Seq, cc.Watermark, a.dict.Len()
	for _, e := range cc.Edges {
		if int(max(e.U, e.V)) >= cc.Nodes || e.U == e.V || (e.Neg > 0 && !a.signed()) {
			return fmt.Errorf("cut %d: stored pair %d–%d does not fit the cut's %d nodes and kind", cc.Seq, e.U, e.V, cc.Nodes)
		}
		if _, err := delta.SetPair(a.graph, a.counter, e.U, e.V, e.Mult, e.Neg); err != nil {
			a.fault = fmt.Errorf("cut %d: pair %d–%d: %w", cc.Seq, e.U, e.V, err)
			return a.fault
		}
	}
	if a.counter != nil {
		a.counter.Changed(func(uint32) {})
	}
	return nil
}
