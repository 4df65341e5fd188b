package shard

import (
	"errors"
	"fmt"
	"time"

	"orbitwatch/shard/alert"
	"orbitwatch/storage"
)

// AlertStage evaluates the alert rules at each cut for the nodes a shard
// owns, reading look-back baselines from the shard's own store. The worker
// runs one; the alert evaluation (bench/cmd/alerteval) runs the same one
// over a single applier, so that what it measures is what the worker does.
// It is not safe for concurrent use.
type AlertStage struct {
	ev      *alert.Evaluator
	changes []alert.NodeChange
	primed  uint64
}

// NewAlertStage returns a stage over ev.
func NewAlertStage(ev *alert.Evaluator) *AlertStage {
	if ev == nil {
		panic("shard: NewAlertStage needs an evaluator")
	}
	return &AlertStage{ev: ev}
}

// Evaluator returns the evaluator in use (for its state and counters).
func (s *AlertStage) Evaluator() *alert.Evaluator { return s.ev }

// Primed counts the cuts evaluated without raising alerts because the
// store's history did not yet reach a look-back back (see Evaluate).
func (s *AlertStage) Primed() uint64 { return s.primed }

// Evaluate scores the nodes a touched since its last ResetTouched that
// owned accepts (nil: all), at cut, and returns the cut's alerts. Call it
// once a's vectors hold the cut's state and before the cut is committed,
// so that st's last complete checkpoint is the previous cut.
//
// With a look-back baseline a node's baseline is its vector as of the
// latest checkpoint whose watermark is ≤ cut.EventTime − Lookback (nil
// when the node did not exist there). The checkpoint is looked up once per
// cut (alert.ReadBaseline would look it up per node).
//
// When st has no such checkpoint the history does not reach back a
// look-back, and a node cannot be told from one that is new. Such a cut
// primes the rules instead: it is evaluated (without baselines) so that
// the rules learn which nodes are already above their levels, but its
// alerts are dropped and Primed counts it. A rule then fires on a level
// crossed after the history began, not on a level a node already held
// when the log began (an opening burst of existing accounts, a count of
// 4-cycles a household has through the shops it shares with others).
// A log thus raises alerts from one look-back of event time after its
// first cut on.
func (s *AlertStage) Evaluate(st *storage.Store, a *Applier, owned func(x uint32) bool, cut alert.Cut) ([]alert.Alert, error) {
	cfg := s.ev.Config()
	var baseSeq uint64
	priming := false
	if cfg.Baseline == alert.BaselineLookback {
		seq, ok := st.SeqAtTime(cut.EventTime.Add(-cfg.Lookback))
		priming = !ok
		baseSeq = seq
	}
	s.changes = s.changes[:0]
	g, vec := a.Graph(), a.Vectors()
	for _, x := range a.Touched() {
		if owned != nil && !owned(x) {
			continue
		}
		c := alert.NodeChange{Node: a.dict.Name(x), Degree: g.Degree(x), Now: vec.Row(x)}
		if cfg.Baseline == alert.BaselineLookback && !priming {
			b, _, _, err := st.VectorAt(c.Node, baseSeq)
			switch {
			case errors.Is(err, storage.ErrUnknownNode):
			case err != nil:
				return nil, fmt.Errorf("alert baseline of %q at seq %d: %w", c.Node, baseSeq, err)
			default:
				c.Baseline = b
			}
		}
		s.changes = append(s.changes, c)
	}
	if priming {
		s.primed++
	}
	if len(s.changes) == 0 {
		return nil, nil
	}
	got := s.ev.Evaluate(cut, s.changes)
	if priming {
		return nil, nil
	}
	return got, nil
}

// alertCut is the cut of a's state at seq for evaluation.
func alertCut(a *Applier, seq uint64, wall time.Time) alert.Cut {
	return alert.Cut{Seq: seq, EventTime: a.Watermark(), WallTime: wall}
}
