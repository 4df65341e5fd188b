package shard

import (
	"errors"
	"fmt"
	"time"

	"orbitwatch/shard/alert"
	"orbitwatch/storage"
)

// StoredEvaluation is what evaluating rules over stored history found.
type StoredEvaluation struct {
	Alerts []alert.Alert
	// From and To are the first and the last rule cut evaluated; Cuts
	// counts them, Primed those evaluated without alerts because the
	// history did not yet reach a look-back back.
	From, To     storage.CheckpointInfo
	Cuts, Primed int
	// Active counts the nodes that had a counterparty at some point of
	// the range: at its start, or touched at one of its cuts.
	Active int
}

// Days returns the event time between the first and the last cut
// evaluated, in days (at least one cut spacing's worth: never 0 when a
// cut was evaluated).
func (e *StoredEvaluation) Days() float64 {
	d := e.To.Watermark.Sub(e.From.Watermark)
	return max(d.Hours()/24, 1.0/24/60)
}

// EvaluateStored evaluates ev's rules over the history st keeps, without
// the log and without recounting: at every rule cut with fromSeq ≤ Seq ≤
// toSeq it scores the nodes whose records the cut (and the flushes since
// the rule cut before) wrote, with their vectors at the cut and at the
// look-back baseline, as the AlertStage of a backfill or a worker did. The
// state at each cut comes from the state at the rule cut before the range
// (StateAt) moved on by the stored net changes of each cut (Follow);
// progress, when set, hears of each cut done.
//
// ev starts from its own state (usually fresh): with fromSeq at the start
// of the history, the alerts are exactly those a backfill of the same log
// with ev's rules raises, on a store that kept all its history; a later
// fromSeq starts hysteresis and cool-downs afresh there. Every node is
// scored, as by one worker (a store of one shard of several holds the
// alerts of its own nodes only).
func EvaluateStored(st *storage.Store, c *Counting, ev *alert.Evaluator, fromSeq, toSeq uint64, progress func(cut storage.CheckpointInfo)) (*StoredEvaluation, error) {
	cuts := st.Checkpoints()
	var first, start storage.CheckpointInfo // the first rule cut of the range, the rule cut before it
	found := false
	for i, cut := range cuts {
		if i == 0 && st.Floor() > 0 {
			// The history before the first retained cut is gone: start
			// there, whatever it is.
			start = cut
			continue
		}
		if cut.Flush {
			continue
		}
		if cut.Seq >= fromSeq {
			first, found = cut, cut.Seq <= toSeq
			break
		}
		start = cut
	}
	if !found {
		return nil, fmt.Errorf("no cut of the cut rules between seq %d and %d: %w", fromSeq, toSeq, storage.ErrNoCheckpoint)
	}
	var a *Applier
	if start.Seq == 0 {
		a = NewApplier(c, 0, Cuts{})
	} else {
		var err error
		if a, _, err = StateAt(st, c, start.Seq); err != nil {
			return nil, fmt.Errorf("state at cut %d: %w", start.Seq, err)
		}
	}
	stage := NewAlertStage(ev, c)
	if err := stage.rebuild(st, start); err != nil {
		return nil, err
	}
	changes, err := st.ChangesBetween(start.Seq, toSeq)
	if err != nil {
		if errors.Is(err, storage.ErrRetention) {
			return nil, fmt.Errorf("the history from cut %d on was discarded: %w", start.Seq, err)
		}
		return nil, err
	}
	res := &StoredEvaluation{From: first}
	active := make([]bool, a.dict.Len())
	for x := range active {
		if a.graph.Degree(uint32(x)) > 0 {
			active[x] = true
		}
	}
	var blobs map[string][]byte
	for i := range changes {
		cc := &changes[i]
		if err := a.Follow(cc); err != nil {
			return nil, err
		}
		for len(active) < a.dict.Len() {
			active = append(active, false)
		}
		cp := &storage.Checkpoint{Seq: cc.Seq, Watermark: cc.Watermark, Names: cc.Names, Edges: cc.Edges, Flush: cc.Flush, Blobs: blobs}
		cp.Records = make([]storage.RecordChange, len(cc.Touched))
		for j, x := range cc.Touched {
			cp.Records[j] = storage.RecordChange{Node: x}
			active[x] = true
		}
		if cp.Blobs == nil {
			cp.Blobs = map[string][]byte{}
		}
		primed := stage.Primed()
		got, err := stage.Evaluate(a, cp, nil, time.Time{})
		if err != nil {
			return nil, fmt.Errorf("cut %d: %w", cc.Seq, err)
		}
		clear(cp.Blobs)
		blobs = cp.Blobs
		if !cc.Flush {
			res.Cuts++
			res.To = cc.CheckpointInfo
			if stage.Primed() > primed {
				res.Primed++
			}
		}
		res.Alerts = append(res.Alerts, got...)
		if progress != nil {
			progress(cc.CheckpointInfo)
		}
	}
	for _, on := range active {
		if on {
			res.Active++
		}
	}
	return res, nil
}

// ActiveNodes counts the nodes that had a counterparty at some cut of st
// with fromSeq ≤ Seq ≤ toSeq: those with an edge at the last cut before
// the range (or its first cut) and those whose records a cut of the range
// wrote. It also returns the range's first and last cut.
func ActiveNodes(st *storage.Store, fromSeq, toSeq uint64) (n int, first, last storage.CheckpointInfo, err error) {
	var start storage.CheckpointInfo
	for _, c := range st.Checkpoints() {
		if c.Seq > toSeq {
			break
		}
		if c.Seq < fromSeq {
			start = c
			continue
		}
		if first.Seq == 0 {
			first = c
		}
		last = c
	}
	if first.Seq == 0 {
		return 0, first, last, fmt.Errorf("no cut between seq %d and %d: %w", fromSeq, toSeq, storage.ErrNoCheckpoint)
	}
	if start.Seq < st.Floor() {
		start = first // the state before the range is gone: start at its first cut
	}
	var active []bool
	if start.Seq > 0 {
		state, err := st.LoadAt(start.Seq)
		if err != nil {
			return 0, first, last, err
		}
		active = make([]bool, state.Dict.Len())
		for x := range active {
			active[x] = state.Graph.Degree(uint32(x)) > 0
		}
	}
	changes, err := st.ChangesBetween(start.Seq, last.Seq)
	if err != nil {
		return 0, first, last, err
	}
	for _, cc := range changes {
		for len(active) < cc.Nodes {
			active = append(active, false)
		}
		for _, x := range cc.Touched {
			active[x] = true
		}
	}
	for _, on := range active {
		if on {
			n++
		}
	}
	return n, first, last, nil
}
