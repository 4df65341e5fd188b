package api

import (
	"encoding/json"
	"fmt"
	"net/http"
	"net/url"
	"slices"
	"strconv"
	"strings"
	"time"
	"unicode/utf8"

	"orbitwatch/delta"
	"orbitwatch/shard"
	"orbitwatch/shard/alert"
)

// Options configures the HTTP API of one worker.
type Options struct {
	// Metrics are the counters /metrics writes. New registers them as the
	// view's Observer (batch and cut latencies) and refreshes the progress
	// gauges and counters from View.Status at every scrape. Nil makes a
	// fresh set.
	Metrics *Metrics
	// Webhook, when set, is the alert webhook whose delivered, retried,
	// failed and dropped counts /metrics reports.
	Webhook *alert.Webhook
	// Peers are the base URLs of every shard's API, indexed by shard
	// (e.g. "https://orbitwatch-1.orbitwatch:7474" at index 1); this
	// shard's own entry is not used. With them /v1/status reports every
	// worker and /v1/alerts lists every worker's alerts (each keeps those
	// of the nodes it owns); without, this one only. Node reads never need
	// them: every worker holds the whole state.
	Peers []string
	// PeerClient makes the requests to peers (a TLS client certificate
	// goes here); nil means a plain client with Timeout. PeerToken, when
	// set, is sent to peers as a bearer token.
	PeerClient *http.Client
	PeerToken  string
	// Timeout bounds a node read, a neighbourhood read and a peer status
	// request; 0 means 5 s.
	Timeout time.Duration
	// Version is the program's version, reported by /v1/status; empty
	// means BuildVersion().
	Version string
	// Rules are the names of the alert rules in force, so that
	// /v1/alerts?rule= can refuse a name that is neither one of them nor
	// the rule of a stored alert.
	Rules []string
	// Logf, when set, hears of internal errors (a store that fails to
	// read), which clients see only as "internal error".
	Logf func(format string, args ...any)
}

// ShardHeader is the response header naming the shard of the worker that
// answered.
const ShardHeader = "Orbitwatch-Shard"

// New returns the HTTP API of the worker seen through v:
//
//	GET /v1/nodes/{id}   one node's orbit vector now (in memory, at the last
//	                     applied event), ?at=TIME as of the latest cut whose
//	                     event-time watermark is ≤ TIME, ?seq=N as of the
//	                     latest cut ≤ N (both from the store)
//	GET /v1/nodes/{id}/history    the node's vector at every stored cut
//	                     where its record changed (and the last), oldest
//	                     first; ?from=TIME&to=TIME bound the event time,
//	                     ?limit=N (default 1000) thins the versions evenly,
//	                     keeping the first and last
//	GET /v1/nodes/{id}/neighbors  up to ?limit=N (default 24, at most
//	                     shard.MaxNeighbors) of its neighbours, busiest
//	                     first, with ?far=K up to K of each one's other
//	                     neighbours (the second hop), every tie among them
//	                     with its direction or sign, and per node the ties
//	                     not drawn (shard.Neighbors); now from the worker's
//	                     graph (v must be a shard.NeighborReader), ?at= or
//	                     ?seq= as of a cut from the store
//	GET /v1/nodes/{id}/similar    the ?k=N (default 20, at most
//	                     MaxSimilar) nodes whose signatures are nearest,
//	                     with ?min_degree=N (default 1) neighbours or more,
//	                     now or ?at=TIME / ?seq=N as of a cut (v must be a
//	                     shard.SimilarReader); see SimilarJSON
//	GET /v1/drift        GCD-11 between two stored cuts, ?from=TIME&to=TIME
//	                     or ?from_seq=N&to_seq=N (default the first and the
//	                     last); see DriftJSON
//	GET /v1/drift/series GCD-11 at every ?every=SPAN from ?from=TIME to
//	                     ?to=TIME (default the first and last cut's event
//	                     time); see DriftSeriesJSON
//	GET /v1/alerts       the stored alerts of every shard in Peers
//	                     (?local=true: this shard's), newest first, each
//	                     with "triage", its verdict in force or null:
//	                     ?since=SEQ (cuts after it) or ?since=TIME (event
//	                     time ≥ it), ?until=TIME (event time ≤ it),
//	                     ?node=ID, ?rule=NAME, ?verdict=V (confirmed,
//	                     dismissed, needs-more, or none for alerts not yet
//	                     triaged), ?limit=N (default 100, at most 1000)
//	GET /v1/alerts/{id}  one alert with "triage" and "triage_history",
//	                     from the peer that keeps it if this shard does not
//	POST /v1/alerts/{id}/triage   {"verdict": V, "note": "…"} records an
//	                     admin's verdict on the alert (the latest is in
//	                     force, earlier ones are kept)
//	GET /v1/catalog      the orbits counted, with their plain names
//	GET /v1/status       the version, and the progress of this worker and
//	                     of its reachable peers (?local=true: this one only)
//	GET /                the web page (see WebHandler), /ui/… its files
//	GET /healthz         200 while the process serves
//	GET /readyz          200 once caught up to the log position the worker
//	                     started behind, else 503
//	GET /metrics         Prometheus text format 0.0.4
//
// Every answer but /metrics and the page is JSON; errors are
// {"error":"…"} with a fitting status, and never carry a store's internals
// (those go to Logf). The id is one path segment, URL-escaped ("a%2Fb" is
// the id "a/b"; an unescaped "/" is kept as part of the id too, but "//"
// and "." or ".." segments are cleaned away by the router unless escaped:
// the ids "." and ".." are read as %2E and %2E%2E).
//
// The handler checks nobody's identity: Server wraps it in the guard that
// does (hosts, sizes, credentials, roles).
func New(v shard.View, opts Options) http.Handler {
	if opts.Metrics == nil {
		opts.Metrics = NewMetrics()
	}
	if opts.Timeout == 0 {
		opts.Timeout = 5 * time.Second
	}
	if opts.PeerClient == nil {
		opts.PeerClient = &http.Client{Timeout: opts.Timeout}
	}
	if opts.Version == "" {
		opts.Version = BuildVersion()
	}
	cat := v.Counting().Catalog
	a := &api{v: v, opts: opts, kind: cat.Kind.String(), maxNodes: cat.MaxNodes, derive: v.Counting().New()}
	v.SetObserver(opts.Metrics)
	mux := http.NewServeMux()
	mux.HandleFunc("/v1/nodes/{id...}", a.get(a.node))
	mux.HandleFunc("/v1/nodes/{id}/history", a.get(a.history))
	mux.HandleFunc("/v1/nodes/{id}/neighbors", a.get(a.neighbors))
	mux.HandleFunc("/v1/nodes/{id}/similar", a.get(a.similar))
	mux.HandleFunc("/v1/drift", a.get(a.drift))
	mux.HandleFunc("/v1/drift/series", a.get(a.driftSeries))
	mux.HandleFunc("/v1/alerts", a.get(a.alerts))
	mux.HandleFunc("/v1/alerts/{id}", a.get(a.oneAlert))
	mux.HandleFunc("/v1/alerts/{id}/triage", a.triage)
	mux.HandleFunc("/v1/catalog", a.get(a.catalog))
	mux.HandleFunc("/v1/status", a.get(a.status))
	web := WebHandler()
	mux.Handle("GET /{$}", web)
	mux.Handle("GET /ui/", web)
	mux.HandleFunc("/healthz", a.get(a.healthz))
	mux.HandleFunc("/readyz", a.get(a.readyz))
	mux.HandleFunc("/metrics", a.get(a.metrics))
	mux.HandleFunc("/", func(w http.ResponseWriter, r *http.Request) {
		writeError(w, http.StatusNotFound, "no such endpoint: "+shorten(r.URL.Path))
	})
	return mux
}

type api struct {
	v        shard.View
	opts     Options
	kind     string
	maxNodes int
	derive   delta.Counter // for history: only Derive is used
}

// get admits GET and HEAD only.
func (a *api) get(h http.HandlerFunc) http.HandlerFunc {
	return func(w http.ResponseWriter, r *http.Request) {
		if r.Method != http.MethodGet && r.Method != http.MethodHead {
			w.Header().Set("Allow", "GET, HEAD")
			writeError(w, http.StatusMethodNotAllowed, fmt.Sprintf("method %s not allowed; use GET", shorten(r.Method)))
			return
		}
		h(w, r)
	}
}

// internal answers 500 without the cause, which goes to Logf: a store's
// messages name keys, versions and files that mean nothing to a client.
func (a *api) internal(w http.ResponseWriter, what string, err error) {
	if a.opts.Logf != nil {
		a.opts.Logf("API: %s: %v", what, err)
	}
	writeError(w, http.StatusInternalServerError, "internal error while reading "+what+"; the worker's log has the cause")
}

func writeJSON(w http.ResponseWriter, status int, body any) {
	b, err := json.Marshal(body)
	if err != nil {
		panic("api: response does not encode as JSON: " + err.Error())
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

// maxShown is the most bytes of a client's own input (an id, a path, a
// query value) an answer repeats back.
const maxShown = 64

// shorten returns s cut to at most maxShown bytes at a character boundary,
// with "…" and the full length added when cut, so that an error answer
// stays small however long the request's id was.
func shorten(s string) string {
	if head, ok := prefix(s); ok {
		return fmt.Sprintf("%s… (%d bytes)", head, len(s))
	}
	return s
}

// quoted is shorten's output with the kept part in Go quotes.
func quoted(s string) string {
	if head, ok := prefix(s); ok {
		return fmt.Sprintf("%q… (%d bytes)", head, len(s))
	}
	return strconv.Quote(s)
}

// prefix returns the first maxShown bytes of s or fewer, ending at a
// character boundary, and whether s is longer.
func prefix(s string) (string, bool) {
	if len(s) <= maxShown {
		return s, false
	}
	n := maxShown
	for n > 0 && !utf8.RuneStart(s[n]) {
		n--
	}
	return s[:n], true
}

// queryKeys refuses query parameters other than those allowed.
func queryKeys(w http.ResponseWriter, q url.Values, allowed ...string) bool {
	for k := range q {
		if !slices.Contains(allowed, k) {
			writeError(w, http.StatusBadRequest, fmt.Sprintf("unknown query parameter %s (want %s)", quoted(k), strings.Join(allowed, ", ")))
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
		writeError(w, http.StatusBadRequest, fmt.Sprintf("limit %s: want a whole number 1..%d", quoted(q.Get("limit")), ceiling))
		return 0, false
	}
	return n, true
}

func optTime(t time.Time) *time.Time {
	if t.IsZero() {
		return nil
	}
	t = t.UTC()
	return &t
}
