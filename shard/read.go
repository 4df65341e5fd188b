package shard

import (
	"context"
	"encoding/json"
	"errors"
	"math"
	"net/http"

	"github.com/nats-io/nats.go"

	"orbitwatch/storage"
)

// readEnvelope is a ReadReply on the wire, with its status.
type readEnvelope struct {
	Status int       `json:"status"`
	Reply  ReadReply `json:"reply"`
}

// Read answers a node read locally when this shard owns the node, else
// forwards it to the owner over NATS request/reply on its ReadSubject; ctx
// bounds the wait (it should carry a deadline).
func (w *Worker) Read(ctx context.Context, req ReadRequest) (ReadReply, error) {
	owner := w.Owner(req.Node)
	if owner == w.cfg.Shard {
		return w.readLocal(req), nil
	}
	data, err := json.Marshal(req)
	if err != nil {
		return ReadReply{}, err
	}
	msg, err := w.cfg.Conn.RequestWithContext(ctx, ReadSubject(w.cfg.Subject, w.cfg.Deployment, owner), data)
	if err != nil {
		return ReadReply{}, err
	}
	var env readEnvelope
	if err := json.Unmarshal(msg.Data, &env); err != nil {
		return ReadReply{}, err
	}
	env.Reply.Status = env.Status
	return env.Reply, nil
}

// readLocal reads a node this shard owns from its store: at the last
// complete cut, or at the latest cut whose watermark is ≤ req.At.
func (w *Worker) readLocal(req ReadRequest) ReadReply {
	cat := w.cfg.Counting.Catalog
	r := ReadReply{Status: http.StatusOK, Node: req.Node, Kind: cat.Kind.String(), MaxNodes: cat.MaxNodes, Shard: w.cfg.Shard}
	seq := uint64(math.MaxUint64)
	if !req.At.IsZero() {
		s, ok := w.cfg.Store.SeqAtTime(req.At)
		if !ok {
			r.Status, r.Error = http.StatusNotFound, "no cut at or before "+req.At.String()
			return r
		}
		seq = s
	}
	vec, cut, wm, err := w.cfg.Store.VectorAt(req.Node, seq)
	switch {
	case errors.Is(err, storage.ErrUnknownNode), errors.Is(err, storage.ErrNoCheckpoint):
		r.Status, r.Error = http.StatusNotFound, err.Error()
	case errors.Is(err, storage.ErrRetention):
		r.Status, r.Error = http.StatusGone, err.Error()
	case err != nil:
		r.Status, r.Error = http.StatusInternalServerError, err.Error()
	default:
		r.Seq, r.EventTime, r.Orbits = cut, wm, vec
	}
	return r
}

// serveReads answers ReadRequests for this shard's nodes on its
// ReadSubject. A request that is not a ReadRequest gets status 400.
func (w *Worker) serveReads() (*nats.Subscription, error) {
	return w.cfg.Conn.Subscribe(ReadSubject(w.cfg.Subject, w.cfg.Deployment, w.cfg.Shard), func(m *nats.Msg) {
		var req ReadRequest
		var env readEnvelope
		if err := json.Unmarshal(m.Data, &req); err != nil {
			env.Status, env.Reply.Error = http.StatusBadRequest, "read request: "+err.Error()
		} else {
			env.Reply = w.readLocal(req)
			env.Status = env.Reply.Status
		}
		data, err := json.Marshal(env)
		if err == nil {
			m.Respond(data)
		}
	})
}
