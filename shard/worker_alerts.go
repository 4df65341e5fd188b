package shard

import (
	"fmt"
	"sort"
	"time"

	"orbitwatch/delta"
	"orbitwatch/shard/alert"
	"orbitwatch/storage"
)

// alertsBlob is the storage blob with the alert evaluator's state.
const alertsBlob = "alerts"

// AlertStage evaluates the alert rules at each cut for the nodes a shard
// owns whose records changed (DESIGN.md §10). The worker and backfill run
// one each, so what a backfill raises is what the worker raises.
//
// Everything it uses is a function of the log: the cut's event time, the
// node's vector at the cut (the applier's, derived from its records), and,
// with a look-back baseline, the node's vector as of the latest cut whose
// watermark is ≤ EventTime − Lookback, derived from the records the store
// holds at that cut. Until the log has such a cut (one look-back of event
// time after its first cut) the rules are primed, not fired: they are
// evaluated so that they learn which nodes are already above their
// levels, but their alerts are dropped. It is not safe for concurrent use.
type AlertStage struct {
	ev      *alert.Evaluator
	store   *storage.Store
	derive  delta.Counter            // reads baselines from the store
	cuts    []storage.CheckpointInfo // every cut taken, oldest first
	changes []alert.NodeChange
	vecs    []uint64 // backing store of the cut's vectors
	primed  uint64
}

// waiter is what the stage needs of a committer: a baseline cut must be
// durable before it is read.
type waiter interface{ Wait(seq uint64) error }

// NewAlertStage returns a stage over ev.
func NewAlertStage(ev *alert.Evaluator) *AlertStage {
	if ev == nil {
		panic("shard: NewAlertStage needs an evaluator")
	}
	return &AlertStage{ev: ev}
}

// Restore loads the evaluator's state and the list of cuts from st, which
// holds state as its last checkpoint.
func (s *AlertStage) Restore(st *storage.Store, state *storage.State) error {
	s.store = st
	s.cuts = st.Checkpoints()
	if b, ok := state.Blobs[alertsBlob]; ok {
		if err := s.ev.UnmarshalBinary(b); err != nil {
			return fmt.Errorf("stored alert state: %w", err)
		}
	}
	return nil
}

// Evaluator returns the evaluator in use (for its state and counters).
func (s *AlertStage) Evaluator() *alert.Evaluator { return s.ev }

// Primed counts the cuts evaluated without raising alerts because the log
// did not yet reach back a look-back.
func (s *AlertStage) Primed() uint64 { return s.primed }

// Evaluate scores, at the cut cp of a (a's state is the cut's), the nodes
// of cp.Records that owned accepts (nil: all), adds their vectors to
// cp.Scored and the evaluator's state to cp.Blobs, and returns the cut's
// alerts (nil while primed). Baselines are read once com has made their
// cut durable.
func (s *AlertStage) Evaluate(a *Applier, cp *storage.Checkpoint, owned func(x uint32) bool, com waiter, wall time.Time) ([]alert.Alert, error) {
	cfg := s.ev.Config()
	s.cuts = append(s.cuts, storage.CheckpointInfo{Seq: cp.Seq, Watermark: cp.Watermark})
	var baseSeq uint64
	priming := false
	if cfg.Baseline == alert.BaselineLookback {
		at := cp.Watermark.Add(-cfg.Lookback)
		i := sort.Search(len(s.cuts), func(i int) bool { return s.cuts[i].Watermark.After(at) }) - 1
		if priming = i < 0; !priming {
			baseSeq = s.cuts[i].Seq
			if err := com.Wait(baseSeq); err != nil {
				return nil, err
			}
		}
	}
	n := a.count.Catalog.NumOrbits()
	var src *storage.Source
	if baseSeq > 0 {
		var err error
		if src, err = s.store.SourceAt(baseSeq); err != nil {
			return nil, err
		}
		defer src.Close()
		if s.derive == nil {
			s.derive = a.count.New()
		}
	}
	s.changes = s.changes[:0]
	s.vecs = s.vecs[:0]
	for _, r := range cp.Records {
		if owned != nil && !owned(r.Node) {
			continue
		}
		var err error
		from := len(s.vecs)
		if s.vecs, err = appendVector(a.counter, r.Node, s.vecs, n); err != nil {
			return nil, err
		}
		c := alert.NodeChange{Node: a.dict.Name(r.Node), Degree: a.graph.Degree(r.Node), Now: s.vecs[from : from+n : from+n]}
		if src != nil && int(r.Node) < src.Checkpoint().Nodes {
			base, err := s.derive.Derive(src, r.Node, nil)
			if err != nil {
				return nil, fmt.Errorf("alert baseline of %q at seq %d: %w", c.Node, baseSeq, err)
			}
			c.Baseline = base
		}
		s.changes = append(s.changes, c)
		cp.Scored = append(cp.Scored, storage.RecordChange{Node: r.Node, Data: delta.AppendCounts(nil, c.Now)})
	}
	if priming {
		s.primed++
	}
	var got []alert.Alert
	if len(s.changes) > 0 {
		got = s.ev.Evaluate(alert.Cut{Seq: cp.Seq, EventTime: cp.Watermark, WallTime: wall}, s.changes)
	}
	state, err := s.ev.MarshalBinary()
	if err != nil {
		return nil, fmt.Errorf("alert state: %w", err)
	}
	cp.Blobs[alertsBlob] = state
	if priming || len(got) == 0 {
		return nil, nil
	}
	cp.Alerts = alert.Records(got)
	return got, nil
}

// appendVector appends x's vector (n counts) to dst.
func appendVector(c delta.Counter, x uint32, dst []uint64, n int) ([]uint64, error) {
	from := len(dst)
	dst = append(dst, make([]uint64, n)...)
	v, err := c.Vector(x, dst[from:from:from+n])
	if err != nil {
		return nil, err
	}
	copy(dst[from:], v)
	return dst, nil
}
