package api

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"net/http"
	"net/url"
	"slices"
	"strconv"
	"strings"
	"sync"
	"time"

	"orbitwatch/delta"
	"orbitwatch/shard"
	"orbitwatch/storage"
	"orbitwatch/stream"
)

// Options configures the HTTP API of one worker.
type Options struct {
	// Metrics are the counters /metrics writes. New registers them as
	// the view's shard.Observer (batch and cut latencies) and refreshes the
	// progress gauges and counters from View.Status at every scrape.
	// Nil makes a fresh set.
	Metrics *Metrics
	// Peers are the base URLs of every shard's API, indexed by shard
	// (e.g. "http://orbitwatch-1.orbitwatch:7474" at index 1); this
	// shard's own entry is not used. With them /v1/status reports every
	// shard and ?seq= reads of another shard's node are forwarded to it
	// over HTTP. Empty: status reports this worker only and such reads are
	// refused (501); ?at= and latest reads go through shard.View.Read either way.
	Peers []string
	// Timeout bounds a forwarded node read and a peer status request;
	// 0 means 5 s.
	Timeout time.Duration
	// Client makes the peer status requests; nil means a client with
	// Timeout.
	Client *http.Client
}

// ShardHeader is the response header naming the shard that answered a
// node read, so that forwarding can be seen without changing the JSON.
const ShardHeader = "Orbitwatch-Shard"

// New returns the HTTP API of the worker seen through v:
//
//	GET /v1/nodes/{id}   one node's orbit vector at the last complete cut,
//	                     ?at=TIME as of the latest cut whose event-time
//	                     watermark is ≤ TIME, ?seq=N as of the latest cut ≤ N
//	GET /v1/status       per-shard progress (this one and reachable peers;
//	                     ?local=true this one only)
//	GET /v1/nodes/{id}/history    the node's vector at every cut where it
//	                     changed (and the last), oldest first; ?from=TIME&to=TIME
//	                     bound the event time, ?limit=N (default 1000) thins
//	                     the versions evenly, keeping the first and last
//	GET /v1/nodes/{id}/neighbors  up to ?limit=N (default 24, at most
//	                     shard.MaxNeighbors) of its neighbours, busiest first, and
//	                     the edges among them, from the worker's graph
//	GET /v1/alerts       this shard's stored alerts, newest first:
//	                     ?since=SEQ (cuts after it) or ?since=RFC3339
//	                     (event time ≥ it), ?node=ID, ?rule=NAME, ?limit=N
//	                     (default 100, at most 1000)
//	GET /v1/catalog      the orbits counted, with their plain names
//	GET /                the web page (see WebHandler), /ui/… its files
//	GET /healthz         200 while the process serves
//	GET /readyz          200 once caught up to the cut it started behind, else 503
//	GET /metrics         Prometheus text format 0.0.4
//
// Every answer but /metrics is JSON; errors are {"error":"…"} with a
// fitting status. The id is one path segment, URL-escaped ("a%2Fb" is the
// id "a/b"; an unescaped "/" is kept as part of the id too, but "//" and
// "." or ".." segments are cleaned away by the router unless escaped: the
// ids "." and ".." are read as %2E and %2E%2E). A node owned by
// another shard is read through v.Read, which forwards it.
func New(v shard.View, opts Options) http.Handler {
	if opts.Metrics == nil {
		opts.Metrics = NewMetrics()
	}
	if opts.Timeout == 0 {
		opts.Timeout = 5 * time.Second
	}
	if opts.Client == nil {
		opts.Client = &http.Client{Timeout: opts.Timeout}
	}
	a := &api{v: v, opts: opts, kind: v.Counting().Catalog.Kind.String(), maxNodes: v.Counting().Catalog.MaxNodes, derive: v.Counting().New()}
	v.SetObserver(opts.Metrics)
	mux := http.NewServeMux()
	mux.HandleFunc("/v1/nodes/{id...}", a.get(a.node))
	mux.HandleFunc("/v1/nodes/{id}/history", a.get(a.history))
	mux.HandleFunc("/v1/nodes/{id}/neighbors", a.get(a.neighbors))
	mux.HandleFunc("/v1/alerts", a.get(a.alerts))
	mux.HandleFunc("/v1/catalog", a.get(a.catalog))
	web := WebHandler()
	mux.Handle("GET /{$}", web)
	mux.Handle("GET /ui/", web)
	mux.HandleFunc("/v1/status", a.get(a.status))
	mux.HandleFunc("/healthz", a.get(a.healthz))
	mux.HandleFunc("/readyz", a.get(a.readyz))
	mux.HandleFunc("/metrics", a.get(a.metrics))
	mux.HandleFunc("/", func(w http.ResponseWriter, r *http.Request) {
		writeError(w, http.StatusNotFound, fmt.Sprintf("no such endpoint: %s", r.URL.Path))
	})
	return mux
}

type api struct {
	v        shard.View
	opts     Options
	kind     string
	maxNodes int
	derive   delta.Counter // for as-of reads: only Derive is used
}

// get admits GET and HEAD only.
func (a *api) get(h http.HandlerFunc) http.HandlerFunc {
	return func(w http.ResponseWriter, r *http.Request) {
		if r.Method != http.MethodGet && r.Method != http.MethodHead {
			w.Header().Set("Allow", "GET, HEAD")
			writeError(w, http.StatusMethodNotAllowed, fmt.Sprintf("method %s not allowed; use GET", r.Method))
			return
		}
		h(w, r)
	}
}

// NodeVector is one node's orbit vector at one cut: the body of the API's
// node read and what `orbitwatch query --json` prints, exactly these keys.
// Seq is the cut's sequence; EventTime its event-time watermark (RFC 3339,
// UTC), nil (JSON null) when no event before it carried a time. Orbits[i]
// is the count of orbit i of the catalog for Kind and MaxNodes.
type NodeVector struct {
	Node      string     `json:"node"`
	Kind      string     `json:"kind"`
	MaxNodes  int        `json:"max_nodes"`
	Seq       uint64     `json:"seq"`
	EventTime *time.Time `json:"event_time"`
	Orbits    []uint64   `json:"orbits"`
}

func (a *api) node(w http.ResponseWriter, r *http.Request) {
	id := r.PathValue("id")
	if id == "" {
		writeError(w, http.StatusNotFound, "no node id in the path (GET /v1/nodes/{id})")
		return
	}
	q := r.URL.Query()
	for k := range q {
		if k != "at" && k != "seq" {
			writeError(w, http.StatusBadRequest, fmt.Sprintf("unknown query parameter %q (want at or seq)", k))
			return
		}
	}
	if q.Has("at") && q.Has("seq") {
		writeError(w, http.StatusBadRequest, "give at or seq, not both")
		return
	}
	req := shard.ReadRequest{Node: id}
	if q.Has("seq") {
		seq, err := strconv.ParseUint(q.Get("seq"), 10, 64)
		if err != nil || seq == 0 {
			writeError(w, http.StatusBadRequest, fmt.Sprintf("seq %q: not a sequence number", q.Get("seq")))
			return
		}
		req.Seq = seq
	}
	if q.Has("at") {
		at, err := stream.ParseTime(q.Get("at"))
		if err != nil {
			writeError(w, http.StatusBadRequest, fmt.Sprintf("at %q: %v", q.Get("at"), err))
			return
		}
		req.At = at
	}
	ctx, cancel := context.WithTimeout(r.Context(), a.opts.Timeout)
	defer cancel()
	rep, err := a.v.Read(ctx, req)
	if err != nil {
		writeError(w, http.StatusInternalServerError, fmt.Sprintf("node %q: %v", id, err))
		return
	}
	w.Header().Set(ShardHeader, strconv.Itoa(rep.Shard))
	if rep.Status != http.StatusOK {
		status := rep.Status
		if status < 400 || status > 599 {
			status = http.StatusBadGateway
		}
		writeError(w, status, rep.Error)
		return
	}
	body := NodeVector{Node: rep.Node, Kind: rep.Kind, MaxNodes: rep.MaxNodes, Seq: rep.Seq, Orbits: rep.Orbits}
	if !rep.EventTime.IsZero() {
		t := rep.EventTime.UTC()
		body.EventTime = &t
	}
	writeJSON(w, http.StatusOK, body)
}

// shardJSON is one shard's line of /v1/status.
type shardJSON struct {
	Shard         int               `json:"shard"`
	Shards        int               `json:"shards"`
	AppliedSeq    uint64            `json:"applied_seq"`
	CutSeq        uint64            `json:"cut_seq"`
	CommittedSeq  uint64            `json:"committed_seq"`
	StreamLastSeq uint64            `json:"stream_last_seq"`
	Lag           uint64            `json:"lag"`
	Ready         bool              `json:"ready"`
	Applied       uint64            `json:"applied"`
	Expired       uint64            `json:"expired"`
	Rejected      map[string]uint64 `json:"rejected"`
	Watermark     *time.Time        `json:"watermark"`
	StartedAt     *time.Time        `json:"started_at"`
	CommittedAt   *time.Time        `json:"committed_at"`
	// AlertsPublished counts the alerts this worker published.
	AlertsPublished uint64 `json:"alerts_published"`
	// Error is set, and the rest empty, when a peer did not answer.
	Error string `json:"error,omitempty"`
}

// statusJSON is the body of /v1/status: the answering shard, its own
// entry first, then one per peer in shard order (with error set, and the
// counts zero, when a peer did not answer).
type statusJSON struct {
	Shard  int         `json:"shard"`
	Shards []shardJSON `json:"shards"`
}

func optTime(t time.Time) *time.Time {
	if t.IsZero() {
		return nil
	}
	t = t.UTC()
	return &t
}

func shardOf(s shard.Status) shardJSON {
	rej := s.Rejected
	if rej == nil {
		rej = map[string]uint64{}
	}
	return shardJSON{
		Shard: s.Shard, Shards: s.Shards, AppliedSeq: s.AppliedSeq, CutSeq: s.CutSeq, CommittedSeq: s.CommittedSeq,
		StreamLastSeq: s.StreamLastSeq, Lag: s.Lag, Ready: s.Ready,
		Applied: s.Applied, Expired: s.Expired, Rejected: rej,
		Watermark: optTime(s.Watermark), StartedAt: optTime(s.StartedAt), CommittedAt: optTime(s.CommittedAt),
		AlertsPublished: s.AlertsPublished,
	}
}

func (a *api) status(w http.ResponseWriter, r *http.Request) {
	local := r.URL.Query().Get("local")
	if local != "" && local != "true" && local != "false" {
		writeError(w, http.StatusBadRequest, fmt.Sprintf("local %q: want true or false", local))
		return
	}
	self := shardOf(a.v.Status())
	out := statusJSON{Shard: self.Shard, Shards: []shardJSON{self}}
	if local != "true" && len(a.opts.Peers) > 0 {
		peers := make([]shardJSON, len(a.opts.Peers))
		var wg sync.WaitGroup
		for i, p := range a.opts.Peers {
			if i == self.Shard || p == "" {
				continue
			}
			wg.Add(1)
			go func() {
				defer wg.Done()
				peers[i] = a.peerStatus(r.Context(), i, p)
			}()
		}
		wg.Wait()
		for i, p := range peers {
			if i == self.Shard || a.opts.Peers[i] == "" {
				continue
			}
			if p.Error == "" && p.Shard != i {
				p = shardJSON{Shard: i, Error: fmt.Sprintf("peer %s says it is shard %d, not %d", a.opts.Peers[i], p.Shard, i)}
			}
			out.Shards = append(out.Shards, p)
		}
	}
	writeJSON(w, http.StatusOK, out)
}

// peerStatus asks the worker of shard i at base for its own status line.
func (a *api) peerStatus(ctx context.Context, i int, base string) shardJSON {
	fail := func(err error) shardJSON {
		return shardJSON{Shard: i, Error: fmt.Sprintf("peer %s: %v", base, err)}
	}
	ctx, cancel := context.WithTimeout(ctx, a.opts.Timeout)
	defer cancel()
	u, err := url.JoinPath(base, "/v1/status")
	if err != nil {
		return fail(err)
	}
	req, err := http.NewRequestWithContext(ctx, http.MethodGet, u+"?local=true", nil)
	if err != nil {
		return fail(err)
	}
	resp, err := a.opts.Client.Do(req)
	if err != nil {
		return fail(err)
	}
	defer resp.Body.Close()
	if resp.StatusCode != http.StatusOK {
		return fail(fmt.Errorf("status %s", resp.Status))
	}
	var st statusJSON
	if err := json.NewDecoder(resp.Body).Decode(&st); err != nil {
		return fail(fmt.Errorf("decoding its status: %w", err))
	}
	if len(st.Shards) != 1 {
		return fail(fmt.Errorf("it reported %d shards for a local status, want 1", len(st.Shards)))
	}
	return st.Shards[0]
}

func (a *api) healthz(w http.ResponseWriter, r *http.Request) {
	writeJSON(w, http.StatusOK, map[string]string{"status": "alive"})
}

func (a *api) readyz(w http.ResponseWriter, r *http.Request) {
	s := a.v.Status()
	if !s.Ready {
		writeError(w, http.StatusServiceUnavailable, fmt.Sprintf("not ready: applied up to %d, log at %d (lag %d)", s.AppliedSeq, s.StreamLastSeq, s.Lag))
		return
	}
	writeJSON(w, http.StatusOK, map[string]any{"ready": true, "applied_seq": s.AppliedSeq, "lag": s.Lag})
}

func (a *api) metrics(w http.ResponseWriter, r *http.Request) {
	a.opts.Metrics.SyncStatus(a.v.Status())
	w.Header().Set("Content-Type", MetricsContentType)
	if r.Method == http.MethodHead {
		return
	}
	a.opts.Metrics.WriteTo(w)
}

func writeJSON(w http.ResponseWriter, status int, body any) {
	b, err := json.Marshal(body)
	if err != nil {
		panic("api: API response does not encode as JSON: " + err.Error())
	}
	w.Header().Set("Content-Type", "application/json")
	w.Header().Set("Content-Length", strconv.Itoa(len(b)+1))
	w.WriteHeader(status)
	w.Write(append(b, '\n'))
}

// writeError writes {"error": msg}; an empty msg is replaced by the status
// text so that no error body is empty.
func writeError(w http.ResponseWriter, status int, msg string) {
	if strings.TrimSpace(msg) == "" {
		msg = http.StatusText(status)
	}
	writeJSON(w, status, map[string]string{"error": msg})
}

// queryKeys refuses query parameters other than those allowed.
func queryKeys(w http.ResponseWriter, q url.Values, allowed ...string) bool {
	for k := range q {
		if !slices.Contains(allowed, k) {
			writeError(w, http.StatusBadRequest, fmt.Sprintf("unknown query parameter %q (want %s)", k, strings.Join(allowed, ", ")))
			return false
		}
	}
	return true
}

// queryLimit reads ?limit=N with a default and a ceiling.
func queryLimit(w http.ResponseWriter, q url.Values, def, ceiling int) (int, bool) {
	if !q.Has("limit") {
		return def, true
	}
	n, err := strconv.Atoi(q.Get("limit"))
	if err != nil || n < 1 || n > ceiling {
		writeError(w, http.StatusBadRequest, fmt.Sprintf("limit %q: want a whole number 1..%d", q.Get("limit"), ceiling))
		return 0, false
	}
	return n, true
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
	id := r.PathValue("id")
	q := r.URL.Query()
	if !queryKeys(w, q, "from", "to", "limit") {
		return
	}
	limit, ok := queryLimit(w, q, 1000, 100000)
	if !ok {
		return
	}
	st := a.v.Store()
	var from, to time.Time
	for _, k := range []string{"from", "to"} {
		if !q.Has(k) {
			continue
		}
		t, err := stream.ParseTime(q.Get(k))
		if err != nil {
			writeError(w, http.StatusBadRequest, fmt.Sprintf("%s %q: %v", k, q.Get(k), err))
			return
		}
		if k == "from" {
			from = t
		} else {
			to = t
		}
	}
	fromSeq, toSeq := uint64(0), st.Seq()
	if !from.IsZero() {
		// The version in force at from is the latest cut at or before it.
		if s, ok := st.SeqAtTime(from); ok {
			fromSeq = s
		}
	}
	if !to.IsZero() {
		s, _ := st.SeqAtTime(to)
		toSeq = s
	}
	vs, err := shard.History(st, a.derive, id, fromSeq, toSeq, limit)
	switch {
	case errors.Is(err, storage.ErrUnknownNode), errors.Is(err, storage.ErrNoCheckpoint):
		writeError(w, http.StatusNotFound, fmt.Sprintf("unknown node %q at cut %d", id, toSeq))
		return
	case err != nil:
		writeError(w, http.StatusInternalServerError, err.Error())
		return
	}
	out := historyJSON{Node: id, Kind: a.kind, MaxNodes: a.maxNodes, Versions: make([]versionJSON, 0, len(vs))}
	for _, v := range vs {
		out.Versions = append(out.Versions, versionJSON{Seq: v.Seq, EventTime: optTime(v.Watermark), Orbits: v.Vector})
	}
	writeJSON(w, http.StatusOK, out)
}

func (a *api) neighbors(w http.ResponseWriter, r *http.Request) {
	id := r.PathValue("id")
	q := r.URL.Query()
	if !queryKeys(w, q, "limit") {
		return
	}
	limit, ok := queryLimit(w, q, 24, shard.MaxNeighbors)
	if !ok {
		return
	}
	nr, ok := a.v.(shard.NeighborReader)
	if !ok {
		writeError(w, http.StatusNotImplemented, "this view does not read the adjacency")
		return
	}
	ctx, cancel := context.WithTimeout(r.Context(), a.opts.Timeout)
	defer cancel()
	nb, err := nr.Neighbors(ctx, id, limit)
	if err != nil {
		writeError(w, http.StatusGatewayTimeout, fmt.Sprintf("neighbours of %q: %v", id, err))
		return
	}
	if !nb.Found {
		writeError(w, http.StatusNotFound, nb.Error)
		return
	}
	writeJSON(w, http.StatusOK, nb)
}

type alertsJSON struct {
	Shard  int               `json:"shard"`
	Alerts []json.RawMessage `json:"alerts"`
}

func (a *api) alerts(w http.ResponseWriter, r *http.Request) {
	q := r.URL.Query()
	if !queryKeys(w, q, "since", "node", "rule", "limit") {
		return
	}
	limit, ok := queryLimit(w, q, 100, 1000)
	if !ok {
		return
	}
	f := storage.AlertFilter{Node: q.Get("node"), Rule: q.Get("rule"), Limit: limit, Newest: true}
	if q.Has("since") {
		s := q.Get("since")
		// A whole number is a cut sequence; a Unix time must be
		// written as RFC 3339 here.
		if n, err := strconv.ParseUint(s, 10, 64); err == nil {
			f.SinceSeq = n
		} else if t, err := stream.ParseTime(s); err == nil {
			f.SinceTime = t
		} else {
			writeError(w, http.StatusBadRequest, fmt.Sprintf("since %q: want a cut sequence number or a time", s))
			return
		}
	}
	recs, err := a.v.Store().Alerts(f)
	if err != nil {
		writeError(w, http.StatusInternalServerError, err.Error())
		return
	}
	self, _ := a.v.Shard()
	out := alertsJSON{Shard: self, Alerts: make([]json.RawMessage, len(recs))}
	for i, rec := range recs {
		out.Alerts[i] = rec.Body
	}
	writeJSON(w, http.StatusOK, out)
}

type orbitJSON struct {
	ID       int    `json:"id"`
	Name     string `json:"name"`
	Graphlet string `json:"graphlet"`
}

func (a *api) catalog(w http.ResponseWriter, r *http.Request) {
	cat := a.v.Counting().Catalog
	out := struct {
		Kind     string      `json:"kind"`
		MaxNodes int         `json:"max_nodes"`
		Orbits   []orbitJSON `json:"orbits"`
	}{Kind: a.kind, MaxNodes: a.maxNodes}
	for _, o := range cat.Orbits {
		out.Orbits = append(out.Orbits, orbitJSON{ID: o.ID, Name: o.Name, Graphlet: cat.Graphlets[o.Graphlet].Name})
	}
	writeJSON(w, http.StatusOK, out)
}
