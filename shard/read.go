package shard

import (
	"context"
	"errors"
	"fmt"
	"net/http"
	"time"

	"orbitwatch/delta"
	"orbitwatch/storage"
)

// Read answers a node read: with neither At nor Seq, from the in-memory
// state at the last applied event (the reply's Seq and EventTime are that
// event's position and the watermark); otherwise as of a cut, derived from
// the store (ReadStored). Every worker holds the whole state, so any
// worker answers for any node.
func (w *Worker) Read(ctx context.Context, req ReadRequest) (ReadReply, error) {
	if req.At.IsZero() && req.Seq == 0 {
		return w.readNow(req.Node), nil
	}
	r := ReadStored(w.cfg.Store, w.derive, w.cfg.Counting, req)
	r.Shard = w.cfg.Shard
	return r, nil
}

func (w *Worker) readNow(node string) ReadReply {
	cat := w.cfg.Counting.Catalog
	r := ReadReply{Status: http.StatusOK, Node: node, Kind: cat.Kind.String(), MaxNodes: cat.MaxNodes, Shard: w.cfg.Shard}
	w.mu.RLock()
	defer w.mu.RUnlock()
	x, ok := w.a.Lookup(node)
	if !ok {
		r.Status, r.Error = http.StatusNotFound, fmt.Sprintf("unknown node %q at seq %d", node, w.a.Seq())
		return r
	}
	vec, err := w.a.Vector(x, nil)
	if err != nil {
		r.Status, r.Error = http.StatusInternalServerError, err.Error()
		return r
	}
	r.Seq, r.EventTime, r.Orbits = w.a.Seq(), w.a.Watermark(), vec
	return r
}

// ReadStored reads node as of a cut of st: the latest cut whose event-time
// watermark is ≤ req.At when At is set, else the latest cut ≤ req.Seq;
// the vector is derived from the records at that cut by c (a counter of
// the store's kind, only its Derive is used). The reply's Status is 200,
// 404 (unknown node, no such cut), 410 (before the retained history) or
// 500.
func ReadStored(st *storage.Store, c delta.Counter, counting *Counting, req ReadRequest) ReadReply {
	cat := counting.Catalog
	rep := ReadReply{Node: req.Node, Kind: cat.Kind.String(), MaxNodes: cat.MaxNodes}
	seq, status, msg := CutFor(st, req.At, req.Seq)
	if status != http.StatusOK {
		rep.Status, rep.Error = status, msg
		return rep
	}
	vec, cut, err := DeriveStored(st, c, req.Node, seq)
	switch {
	case err == nil:
		rep.Status, rep.Seq, rep.EventTime, rep.Orbits = http.StatusOK, cut.Seq, cut.Watermark, vec
	case errors.Is(err, storage.ErrUnknownNode):
		rep.Status, rep.Error = http.StatusNotFound, fmt.Sprintf("unknown node %q at cut %d", req.Node, cut.Seq)
	case errors.Is(err, storage.ErrNoCheckpoint):
		rep.Status, rep.Error = http.StatusNotFound, fmt.Sprintf("no complete cut at or before seq %d", seq)
	case errors.Is(err, storage.ErrRetention):
		rep.Status, rep.Error = http.StatusGone, fmt.Sprintf("seq %d is before the retained history (floor %d)", seq, st.Floor())
	default:
		rep.Status, rep.Error = http.StatusInternalServerError, err.Error()
	}
	return rep
}

// CutFor returns the sequence an as-of read names: seq itself, or for a
// non-zero at the latest cut whose event-time watermark is ≤ at; the
// status is 200, or 404 / 410 with the reason.
func CutFor(st *storage.Store, at time.Time, seq uint64) (uint64, int, string) {
	if at.IsZero() {
		return seq, http.StatusOK, ""
	}
	s, ok := st.SeqAtTime(at)
	switch {
	case !ok && s > 0:
		return 0, http.StatusGone, fmt.Sprintf("the latest cut at or before %s (seq %d) is before the retained history (floor %d)", at.Format(time.RFC3339Nano), s, st.Floor())
	case !ok:
		return 0, http.StatusNotFound, fmt.Sprintf("no complete cut with an event-time watermark at or before %s", at.Format(time.RFC3339Nano))
	}
	return s, http.StatusOK, ""
}

// DeriveStored returns node's orbit vector as of the latest complete cut
// of st with Seq ≤ seq, derived by c from the records and adjacency
// stored there, with the cut.
func DeriveStored(st *storage.Store, c delta.Counter, node string, seq uint64) ([]uint64, storage.CheckpointInfo, error) {
	src, err := st.SourceAt(seq)
	if err != nil {
		return nil, storage.CheckpointInfo{}, err
	}
	defer src.Close()
	x, err := src.Node(node)
	if err != nil {
		return nil, src.Checkpoint(), err
	}
	vec, err := c.Derive(src, x, nil)
	return vec, src.Checkpoint(), err
}
