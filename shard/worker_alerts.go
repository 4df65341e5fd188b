package shard

import (
	"encoding/binary"
	"errors"
	"fmt"
	"slices"
	"time"

	"orbitwatch/shard/alert"
	"orbitwatch/storage"
)

// Blobs of the alert stage's state, stored with each cut.
const (
	alertsBlob  = "alerts"         // the evaluator's state
	pendingBlob = "alerts-pending" // nodes touched at flushes since the last rule cut
)

// AlertStage evaluates the alert rules at each cut of the cut rules for
// the nodes a shard owns whose records were touched since the last such
// cut (DESIGN.md §10). The worker, backfill and re-evaluation over stored
// history run one each, so what one raises the others raise.
//
// Everything it uses is a function of the log: the cut's event time, the
// node's vector at the cut (the applier's, derived from its records), and,
// with a look-back baseline, the node's vector as of the latest rule cut
// whose watermark is ≤ EventTime − Lookback. That baseline state is kept
// in memory by a second applier that trails the live one by whole cuts
// (Applier.Follow): it costs a second copy of the graph and the records,
// and each cut's net pair changes applied once more, instead of an as-of
// read from the store for every scored node. Until the log has such a cut
// (one look-back of event time after its first rule cut) the rules are
// primed, not fired: they are evaluated so that they learn which nodes are
// already above their levels, but their alerts are dropped.
//
// A flush (a cut where an input ended, storage.Checkpoint.Flush) is not
// evaluated and never a baseline: the nodes it touched are kept for the
// next rule cut, so where a backfill's inputs end changes no alert. It is
// not safe for concurrent use.
type AlertStage struct {
	ev    *alert.Evaluator
	count *Counting

	// base is the state at the latest rule cut at most a look-back behind
	// the live one (nil: no such cut yet, or a decayed baseline); queue
	// are the cuts after it, oldest first.
	base  *Applier
	queue []*storage.CutChanges
	// pending are the nodes touched at flushes since the last rule cut,
	// sorted.
	pending []uint32
	// lastRule is the watermark of the last rule cut (zero: none yet), by
	// which a sweep comes due.
	lastRule time.Time

	changes []alert.NodeChange
	vecs    []uint64 // backing store of the cut's vectors
	primed  uint64
	swept   uint64
}

// NewAlertStage returns a stage over ev for applier states counted by c.
func NewAlertStage(ev *alert.Evaluator, c *Counting) *AlertStage {
	if ev == nil || c == nil || c.New == nil {
		panic("shard: NewAlertStage needs an evaluator and counters")
	}
	return &AlertStage{ev: ev, count: c}
}

// lookback reports whether baselines are read a look-back back.
func (s *AlertStage) lookback() bool { return s.ev.Config().Baseline == alert.BaselineLookback }

// Restore loads the stage's state as of state, st's last checkpoint: the
// evaluator's state and the pending nodes from its blobs, and, with a
// look-back baseline, the baseline state (StateAt its cut) and the stored
// changes of the cuts since. The history a look-back back must be retained
// (KeepFor).
func (s *AlertStage) Restore(st *storage.Store, state *storage.State) error {
	if b, ok := state.Blobs[alertsBlob]; ok {
		if err := s.ev.UnmarshalBinary(b); err != nil {
			return fmt.Errorf("stored alert state: %w", err)
		}
	}
	var err error
	if s.pending, err = decodeNodes(state.Blobs[pendingBlob]); err != nil {
		return fmt.Errorf("stored alert state: pending nodes: %w", err)
	}
	return s.rebuild(st, storage.CheckpointInfo{Seq: state.Seq, Watermark: state.Watermark})
}

// rebuild sets the baseline state and queue for a stage whose applier is
// at cut at of st.
func (s *AlertStage) rebuild(st *storage.Store, at storage.CheckpointInfo) error {
	s.base, s.queue, s.lastRule = nil, nil, time.Time{}
	if c, ok := baseCut(st.Checkpoints(), at.Watermark, at.Seq); ok && at.Seq > 0 {
		s.lastRule = c.Watermark
	}
	if !s.lookback() || at.Seq == 0 {
		return nil
	}
	var from uint64
	if c, ok := baseCut(st.Checkpoints(), at.Watermark.Add(-s.ev.Config().Lookback), at.Seq); ok {
		var err error
		if s.base, _, err = StateAt(st, s.count, c.Seq); err != nil {
			return fmt.Errorf("alert baseline state at cut %d: %w", c.Seq, err)
		}
		from = c.Seq
	}
	changes, err := st.ChangesBetween(from, at.Seq)
	if err != nil {
		if errors.Is(err, storage.ErrRetention) {
			return fmt.Errorf("alert baselines need the history a look-back (%v) before cut %d, which was discarded (raise --keep-history): %w", s.ev.Config().Lookback, at.Seq, err)
		}
		return fmt.Errorf("alert baselines: %w", err)
	}
	for i := range changes {
		changes[i].Touched = nil
		s.queue = append(s.queue, &changes[i])
	}
	return nil
}

// baseCut returns the latest rule cut (not a flush) of cuts with Seq ≤
// seq whose watermark is ≤ t.
func baseCut(cuts []storage.CheckpointInfo, t time.Time, seq uint64) (storage.CheckpointInfo, bool) {
	for i := len(cuts) - 1; i >= 0; i-- {
		if c := cuts[i]; c.Seq <= seq && !c.Flush && !c.Watermark.After(t) {
			return c, true
		}
	}
	return storage.CheckpointInfo{}, false
}

// KeepFor returns the event-time history a store must keep for stage:
// keep, raised for a look-back baseline to two look-backs and one cut
// spacing, so that at any restart the latest rule cut a look-back back is
// still there (a flush can come between it and the retention floor).
func KeepFor(keep time.Duration, stage *AlertStage, cuts Cuts) time.Duration {
	if keep <= 0 || stage == nil || !stage.lookback() {
		return keep
	}
	return max(keep, 2*stage.ev.Config().Lookback+cuts.Every)
}

// Evaluator returns the evaluator in use (for its state and counters).
func (s *AlertStage) Evaluator() *alert.Evaluator { return s.ev }

// Primed counts the rule cuts evaluated without raising alerts because
// the log did not yet reach back a look-back.
func (s *AlertStage) Primed() uint64 { return s.primed }

// Swept counts the rule cuts at which every node was scored (a sweep,
// alert.Config.Sweep).
func (s *AlertStage) Swept() uint64 { return s.swept }

// Evaluate takes the cut cp of a (a's state is the cut's): at a rule cut
// it scores the nodes touched since the last rule cut (cp.Records and the
// flushes' since), or every node with an edge when a sweep is due (the
// first rule cut at or after a multiple of alert.Config.Sweep of event
// time past the last rule cut), that owned accepts (nil: all), and
// returns the cut's
// alerts (nil while primed), also put in cp.Alerts; at a flush it only
// remembers the touched nodes. Either way it puts its state in cp.Blobs.
func (s *AlertStage) Evaluate(a *Applier, cp *storage.Checkpoint, owned func(x uint32) bool, wall time.Time) ([]alert.Alert, error) {
	touched := make([]uint32, len(cp.Records))
	for i, r := range cp.Records {
		touched[i] = r.Node
	}
	if s.lookback() {
		s.queue = append(s.queue, changesOf(cp, a.dict.Len()))
	}
	if cp.Flush {
		s.pending = mergeNodes(s.pending, touched)
		return nil, s.save(cp)
	}
	nodes := mergeNodes(s.pending, touched)
	s.pending = nil
	if sweep := s.ev.Config().Sweep; sweep > 0 && !s.lastRule.IsZero() && !cp.Watermark.Before(nextBoundary(s.lastRule, sweep)) {
		nodes = nodes[:0]
		for x := range a.dict.Len() {
			if a.graph.Degree(uint32(x)) > 0 {
				nodes = append(nodes, uint32(x))
			}
		}
		s.swept++
	}
	s.lastRule = cp.Watermark
	priming := false
	if s.lookback() {
		if err := s.advance(cp.Watermark.Add(-s.ev.Config().Lookback)); err != nil {
			return nil, err
		}
		priming = s.base == nil
	}
	if err := s.collect(a, nodes, owned); err != nil {
		return nil, err
	}
	if priming {
		s.primed++
	}
	var got []alert.Alert
	if len(s.changes) > 0 {
		got = s.ev.Evaluate(alert.Cut{Seq: cp.Seq, EventTime: cp.Watermark, WallTime: wall}, s.changes)
	}
	if err := s.save(cp); err != nil {
		return nil, err
	}
	if priming || len(got) == 0 {
		return nil, nil
	}
	cp.Alerts = alert.Records(got)
	return got, nil
}

// changesOf returns what cp changes, for Follow, with nodes the
// dictionary size at the cut. cp's slices are the cut's own (the applier
// does not change them after the cut), so they are shared, not copied.
func changesOf(cp *storage.Checkpoint, nodes int) *storage.CutChanges {
	return &storage.CutChanges{
		CheckpointInfo: storage.CheckpointInfo{Seq: cp.Seq, Watermark: cp.Watermark, Nodes: nodes, Flush: cp.Flush},
		Names:          cp.Names, Edges: cp.Edges,
	}
}

// advance moves the baseline state to the latest queued rule cut whose
// watermark is ≤ t, if there is one.
func (s *AlertStage) advance(t time.Time) error {
	j := -1
	for i, q := range s.queue {
		if q.Watermark.After(t) {
			break
		}
		if !q.Flush {
			j = i
		}
	}
	if j < 0 {
		return nil
	}
	if s.base == nil {
		s.base = NewApplier(s.count, 0, Cuts{})
	}
	for _, q := range s.queue[:j+1] {
		if err := s.base.Follow(q); err != nil {
			return fmt.Errorf("alert baseline state: %w", err)
		}
	}
	s.queue = append(s.queue[:0:0], s.queue[j+1:]...)
	return nil
}

// collect fills s.changes with the owned nodes' vectors now and at the
// baseline (a node that did not exist at the baseline cut has none).
func (s *AlertStage) collect(a *Applier, nodes []uint32, owned func(x uint32) bool) error {
	n := a.count.Catalog.NumOrbits()
	s.changes = s.changes[:0]
	s.vecs = s.vecs[:0]
	for _, x := range nodes {
		if owned != nil && !owned(x) {
			continue
		}
		c := alert.NodeChange{Node: a.dict.Name(x), Degree: a.graph.Degree(x)}
		var err error
		if s.vecs, err = appendVector(a, x, s.vecs, n); err != nil {
			return err
		}
		if s.base != nil && int(x) < s.base.dict.Len() {
			if s.vecs, err = appendVector(s.base, x, s.vecs, n); err != nil {
				return fmt.Errorf("alert baseline of %q at cut %d: %w", c.Node, s.base.Seq(), err)
			}
			c.Baseline = []uint64{} // placed below, once s.vecs stops moving
		}
		s.changes = append(s.changes, c)
	}
	off := 0
	for i := range s.changes {
		c := &s.changes[i]
		c.Now = s.vecs[off : off+n : off+n]
		off += n
		if c.Baseline != nil {
			c.Baseline = s.vecs[off : off+n : off+n]
			off += n
		}
	}
	return nil
}

// save puts the stage's state in cp.Blobs.
func (s *AlertStage) save(cp *storage.Checkpoint) error {
	state, err := s.ev.MarshalBinary()
	if err != nil {
		return fmt.Errorf("alert state: %w", err)
	}
	cp.Blobs[alertsBlob] = state
	cp.Blobs[pendingBlob] = encodeNodes(s.pending)
	return nil
}

// appendVector appends x's vector in a (n counts) to dst.
func appendVector(a *Applier, x uint32, dst []uint64, n int) ([]uint64, error) {
	from := len(dst)
	dst = append(dst, make([]uint64, n)...)
	v, err := a.counter.Vector(x, dst[from:from:from+n])
	if err != nil {
		return nil, err
	}
	copy(dst[from:], v)
	return dst, nil
}

// mergeNodes returns the sorted union of the sorted lists a and b.
func mergeNodes(a, b []uint32) []uint32 {
	out := make([]uint32, 0, len(a)+len(b))
	out = append(append(out, a...), b...)
	slices.Sort(out)
	return slices.Compact(out)
}

// encodeNodes lays sorted node ids out as uvarint gaps (nil for none,
// which deletes the blob).
func encodeNodes(xs []uint32) []byte {
	if len(xs) == 0 {
		return nil
	}
	var b []byte
	prev := uint32(0)
	for _, x := range xs {
		b = binary.AppendUvarint(b, uint64(x-prev))
		prev = x
	}
	return b
}

func decodeNodes(b []byte) ([]uint32, error) {
	var out []uint32
	prev := uint64(0)
	for len(b) > 0 {
		d, k := binary.Uvarint(b)
		if k <= 0 || prev+d > 1<<32-1 || (len(out) > 0 && d == 0) {
			return nil, errors.New("not increasing uvarint gaps")
		}
		prev += d
		out = append(out, uint32(prev))
		b = b[k:]
	}
	return out, nil
}
