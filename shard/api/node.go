package api

import (
	"context"
	"errors"
	"fmt"
	"net/http"
	"net/url"
	"strconv"
	"strings"
	"time"
	"unicode/utf8"

	"orbitwatch/shard"
	"orbitwatch/storage"
	"orbitwatch/stream"
)

// NodeVector is one node's orbit vector at one point of the log: the body
// of the API's node read and what `orbitwatch query --json` prints, exactly
// these keys. Seq is the log position read (the last applied event for a
// read now, the cut for an as-of read); EventTime the event-time watermark
// there (RFC 3339, UTC), nil (JSON null) when no event before it carried a
// time. Orbits[i] is the count of orbit i of the catalog for Kind and
// MaxNodes.
type NodeVector struct {
	Node      string     `json:"node"`
	Kind      string     `json:"kind"`
	MaxNodes  int        `json:"max_nodes"`
	Seq       uint64     `json:"seq"`
	EventTime *time.Time `json:"event_time"`
	Orbits    []uint64   `json:"orbits"`
}

// badID says why id cannot name a node, or "" when it can: node ids are
// valid UTF-8 of at most stream.MaxIDBytes bytes (the decoder refuses
// others), so such a request is answered without reading anything.
func badID(id string) string {
	switch {
	case id == "":
		return "no node id in the path (GET /v1/nodes/{id})"
	case len(id) > stream.MaxIDBytes:
		return fmt.Sprintf("no node %s: node ids are at most %d bytes", quoted(id), stream.MaxIDBytes)
	case !utf8.ValidString(id):
		return fmt.Sprintf("no node %s: node ids are valid UTF-8", quoted(id))
	}
	return ""
}

// timeError says why the value s of query parameter key is not a time;
// the parser's words quote s in full, the answer at most maxShown bytes
// of it.
func timeError(key, s string, err error) string {
	return fmt.Sprintf("%s %s: %s", key, quoted(s), strings.ReplaceAll(err.Error(), strconv.Quote(s), quoted(s)))
}

// nodeRequest reads the id and the query of a request about one node,
// refusing (404, 400) an id no node can have and parameters other than
// allowed.
func nodeRequest(w http.ResponseWriter, r *http.Request, allowed ...string) (id string, q url.Values, ok bool) {
	id = r.PathValue("id")
	if msg := badID(id); msg != "" {
		writeError(w, http.StatusNotFound, msg)
		return "", nil, false
	}
	q = r.URL.Query()
	return id, q, queryKeys(w, q, allowed...)
}

// answered names the answering shard in the header and, unless the view
// answered status 200, writes its refusal: a 404 or 410 in the view's
// words (which name id in full; an answer repeats at most maxShown bytes
// of it), anything else as an internal error about what. It reports
// whether the caller goes on to write the answer.
func (a *api) answered(w http.ResponseWriter, shard, status int, msg, id, what string) bool {
	w.Header().Set(ShardHeader, strconv.Itoa(shard))
	switch status {
	case http.StatusOK:
		return true
	case http.StatusNotFound, http.StatusGone:
		writeError(w, status, strings.ReplaceAll(msg, strconv.Quote(id), quoted(id)))
	default:
		a.internal(w, what, fmt.Errorf("status %d: %s", status, msg))
	}
	return false
}

func (a *api) node(w http.ResponseWriter, r *http.Request) {
	id, q, ok := nodeRequest(w, r, "at", "seq")
	if !ok {
		return
	}
	req := shard.ReadRequest{Node: id}
	if !asOf(w, q, &req) {
		return
	}
	ctx, cancel := context.WithTimeout(r.Context(), a.opts.Timeout)
	defer cancel()
	rep, err := a.v.Read(ctx, req)
	if err != nil {
		a.internal(w, "node "+quoted(id), err)
		return
	}
	if !a.answered(w, rep.Shard, rep.Status, rep.Error, id, "node "+quoted(id)) {
		return
	}
	writeJSON(w, http.StatusOK, NodeVector{Node: rep.Node, Kind: rep.Kind, MaxNodes: rep.MaxNodes, Seq: rep.Seq, EventTime: optTime(rep.EventTime), Orbits: rep.Orbits})
}

// asOf reads ?at=TIME or ?seq=N (not both) into req, answering 400 for
// a bad value.
func asOf(w http.ResponseWriter, q url.Values, req *shard.ReadRequest) bool {
	if q.Has("at") && q.Has("seq") {
		writeError(w, http.StatusBadRequest, "give at or seq, not both")
		return false
	}
	if q.Has("seq") {
		seq, err := strconv.ParseUint(q.Get("seq"), 10, 64)
		if err != nil || seq == 0 {
			writeError(w, http.StatusBadRequest, fmt.Sprintf("seq %s: want a log sequence number ≥ 1", quoted(q.Get("seq"))))
			return false
		}
		req.Seq = seq
	}
	if q.Has("at") {
		at, err := stream.ParseTime(q.Get("at"))
		if err != nil {
			writeError(w, http.StatusBadRequest, timeError("at", q.Get("at"), err))
			return false
		}
		req.At = at
	}
	return true
}

// versionJSON is one entry of a node's history.
type versionJSON struct {
	Seq       uint64     `json:"seq"`
	EventTime *time.Time `json:"event_time"`
	Orbits    []uint64   `json:"orbits"`
}

type historyJSON struct {
	Node     string        `json:"node"`
	Kind     string        `json:"kind"`
	MaxNodes int           `json:"max_nodes"`
	Versions []versionJSON `json:"versions"`
}

func (a *api) history(w http.ResponseWriter, r *http.Request) {
	id, q, ok := nodeRequest(w, r, "from", "to", "limit")
	if !ok {
		return
	}
	limit, ok := queryLimit(w, q, 1000, 100000)
	if !ok {
		return
	}
	var bound [2]time.Time
	for i, k := range []string{"from", "to"} {
		if !q.Has(k) {
			continue
		}
		t, err := stream.ParseTime(q.Get(k))
		if err != nil {
			writeError(w, http.StatusBadRequest, timeError(k, q.Get(k), err))
			return
		}
		bound[i] = t
	}
	st := a.v.Store()
	fromSeq, toSeq := uint64(0), st.Seq()
	if !bound[0].IsZero() {
		// The version in force at from is the latest cut at or before it.
		if s, ok := st.SeqAtTime(bound[0]); ok {
			fromSeq = s
		}
	}
	if !bound[1].IsZero() {
		toSeq, _ = st.SeqAtTime(bound[1])
	}
	vs, err := shard.History(st, a.derive, id, fromSeq, toSeq, limit)
	switch {
	case errors.Is(err, storage.ErrUnknownNode):
		writeError(w, http.StatusNotFound, fmt.Sprintf("no node %s in the stored cuts up to %d", quoted(id), toSeq))
		return
	case errors.Is(err, storage.ErrNoCheckpoint):
		writeError(w, http.StatusNotFound, "no complete cut in the store yet at or before the end of the range")
		return
	case errors.Is(err, storage.ErrRetention):
		writeError(w, http.StatusGone, fmt.Sprintf("the range reaches before the retained history (cuts from %d on are kept)", st.Floor()))
		return
	case err != nil:
		a.internal(w, "the history of "+quoted(id), err)
		return
	}
	out := historyJSON{Node: id, Kind: a.kind, MaxNodes: a.maxNodes, Versions: make([]versionJSON, 0, len(vs))}
	for _, v := range vs {
		out.Versions = append(out.Versions, versionJSON{Seq: v.Seq, EventTime: optTime(v.Watermark), Orbits: v.Vector})
	}
	writeJSON(w, http.StatusOK, out)
}

func (a *api) neighbors(w http.ResponseWriter, r *http.Request) {
	id, q, ok := nodeRequest(w, r, "limit", "far", "at", "seq")
	if !ok {
		return
	}
	nq := shard.NeighborQuery{Node: id}
	if nq.Limit, ok = queryLimit(w, q, 24, shard.MaxNeighbors); !ok {
		return
	}
	if q.Has("far") {
		n, err := strconv.Atoi(q.Get("far"))
		if err != nil || n < 0 || n > shard.MaxFar {
			writeError(w, http.StatusBadRequest, fmt.Sprintf("far %s: want a whole number 0..%d (second-hop nodes per neighbour)", quoted(q.Get("far")), shard.MaxFar))
			return
		}
		nq.Far = n
	}
	var rr shard.ReadRequest
	if !asOf(w, q, &rr) {
		return
	}
	nq.At, nq.Seq = rr.At, rr.Seq
	ctx, cancel := context.WithTimeout(r.Context(), a.opts.Timeout)
	defer cancel()
	var nb shard.Neighbors
	if nq.At.IsZero() && nq.Seq == 0 {
		nr, ok := a.v.(shard.NeighborReader)
		if !ok {
			writeError(w, http.StatusNotImplemented, "this worker does not read its adjacency now; ask as of a cut (at= or seq=)")
			return
		}
		var err error
		if nb, err = nr.Neighborhood(ctx, nq); err != nil {
			writeError(w, http.StatusServiceUnavailable, fmt.Sprintf("the neighbours of %s were not read in time; try again", quoted(id)))
			return
		}
	} else if nb = shard.NeighborhoodStored(ctx, a.v.Store(), nq); ctx.Err() != nil {
		writeError(w, http.StatusServiceUnavailable, fmt.Sprintf("the neighbours of %s as of that cut were not read in time; try again", quoted(id)))
		return
	}
	switch {
	case nb.Found:
	case nb.Status == http.StatusNotFound || nb.Status == http.StatusGone:
		writeError(w, nb.Status, strings.ReplaceAll(nb.Error, strconv.Quote(id), quoted(id)))
		return
	default:
		a.internal(w, "the neighbours of "+quoted(id), errors.New(nb.Error))
		return
	}
	writeJSON(w, http.StatusOK, nb)
}
