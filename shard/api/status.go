package api

import (
	"context"
	"encoding/json"
	"fmt"
	"io"
	"net/http"
	"net/url"
	"runtime/debug"
	"sync"
	"time"
)

// workerJSON is one worker's entry of /v1/status, the list "shards". Each
// name has one meaning: shards is that list, shard a shard's number,
// shard_count how many there are.
type workerJSON struct {
	Shard      int    `json:"shard"`
	ShardCount int    `json:"shard_count"`
	Version    string `json:"version,omitempty"`
	// AppliedSeq is the last log position applied (reads now see it);
	// CutSeq the last cut taken, CommittedSeq the last one durable (as-of
	// reads and alerts reach it).
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
	// CommitRetries counts commits the store refused for want of space
	// and the worker tried again; Stalled is the refusal being waited out
	// now (absent while commits go through).
	CommitRetries uint64 `json:"commit_retries"`
	Stalled       string `json:"stalled,omitempty"`
	// AlertsPublished counts the alerts this worker published.
	AlertsPublished uint64 `json:"alerts_published"`
	// Error is set, and the rest empty, when a peer did not answer.
	Error string `json:"error,omitempty"`
}

// statusJSON is the body of /v1/status: the answering worker's version,
// shard and shard count, then one entry per shard's worker, its own first,
// the peers after it in shard order.
type statusJSON struct {
	Version    string       `json:"version"`
	Shard      int          `json:"shard"`
	ShardCount int          `json:"shard_count"`
	Shards     []workerJSON `json:"shards"`
}

func (a *api) self() workerJSON {
	s := a.v.Status()
	rej := s.Rejected
	if rej == nil {
		rej = map[string]uint64{}
	}
	return workerJSON{
		Shard: s.Shard, ShardCount: s.Shards, Version: a.opts.Version,
		AppliedSeq: s.AppliedSeq, CutSeq: s.CutSeq, CommittedSeq: s.CommittedSeq,
		StreamLastSeq: s.StreamLastSeq, Lag: s.Lag, Ready: s.Ready,
		CommitRetries: s.CommitRetries, Stalled: s.Stalled,
		Applied: s.Applied, Expired: s.Expired, Rejected: rej,
		Watermark: optTime(s.Watermark), StartedAt: optTime(s.StartedAt), CommittedAt: optTime(s.CommittedAt),
		AlertsPublished: s.AlertsPublished,
	}
}

func (a *api) status(w http.ResponseWriter, r *http.Request) {
	q := r.URL.Query()
	if !queryKeys(w, q, "local") {
		return
	}
	local, ok := queryLocal(w, q)
	if !ok {
		return
	}
	self := a.self()
	out := statusJSON{Version: a.opts.Version, Shard: self.Shard, ShardCount: self.ShardCount, Shards: []workerJSON{self}}
	if !local && len(a.opts.Peers) > 0 {
		peers := make([]workerJSON, len(a.opts.Peers))
		a.eachPeer(func(i int, base string) { peers[i] = a.peerStatus(r.Context(), i, base) })
		for i, p := range peers {
			if i == self.Shard || a.opts.Peers[i] == "" {
				continue
			}
			if p.Error == "" && p.Shard != i {
				p = workerJSON{Shard: i, Error: fmt.Sprintf("peer %s says it is shard %d, not %d", a.opts.Peers[i], p.Shard, i)}
			}
			out.Shards = append(out.Shards, p)
		}
	}
	writeJSON(w, http.StatusOK, out)
}

// peerStatus asks the worker of shard i at base for its own entry.
func (a *api) peerStatus(ctx context.Context, i int, base string) workerJSON {
	fail := func(err error) workerJSON {
		return workerJSON{Shard: i, Error: fmt.Sprintf("peer %s: %v", base, err)}
	}
	var st statusJSON
	if err := a.peerGet(ctx, base, "/v1/status", url.Values{}, &st); err != nil {
		return fail(err)
	}
	if len(st.Shards) != 1 {
		return fail(fmt.Errorf("it reported %d shards for a local status, want 1", len(st.Shards)))
	}
	return st.Shards[0]
}

// eachPeer calls f, each call on its own goroutine, for every shard i of
// Peers but this one that has a URL, and returns when all have returned.
func (a *api) eachPeer(f func(i int, base string)) {
	self, _ := a.v.Shard()
	var wg sync.WaitGroup
	for i, p := range a.opts.Peers {
		if i != self && p != "" {
			wg.Go(func() { f(i, p) })
		}
	}
	wg.Wait()
}

// peerGet asks the worker at base for path with query q and local=true
// (its own answer, not one gathered from its peers), within the peer
// timeout, and decodes a 200 answer into out. Another status is an error
// carrying the peer's own error message.
func (a *api) peerGet(ctx context.Context, base, path string, q url.Values, out any) error {
	ctx, cancel := context.WithTimeout(ctx, a.opts.Timeout)
	defer cancel()
	u, err := url.JoinPath(base, path)
	if err != nil {
		return err
	}
	q.Set("local", "true")
	req, err := http.NewRequestWithContext(ctx, http.MethodGet, u+"?"+q.Encode(), nil)
	if err != nil {
		return err
	}
	if a.opts.PeerToken != "" {
		req.Header.Set("Authorization", "Bearer "+a.opts.PeerToken)
	}
	resp, err := a.opts.PeerClient.Do(req)
	if err != nil {
		return err
	}
	defer resp.Body.Close()
	body := io.LimitReader(resp.Body, maxPeerBody)
	if resp.StatusCode != http.StatusOK {
		var e struct {
			Error string `json:"error"`
		}
		if json.NewDecoder(body).Decode(&e) == nil && e.Error != "" {
			return fmt.Errorf("status %s: %s", resp.Status, e.Error)
		}
		return fmt.Errorf("status %s", resp.Status)
	}
	if err := json.NewDecoder(body).Decode(out); err != nil {
		return fmt.Errorf("decoding its answer: %w", err)
	}
	return nil
}

// maxPeerBody bounds a peer's answer: a status, or up to 1,000 alerts.
const maxPeerBody = 64 << 20

func (a *api) healthz(w http.ResponseWriter, r *http.Request) {
	writeJSON(w, http.StatusOK, map[string]string{"status": "alive"})
}

func (a *api) readyz(w http.ResponseWriter, r *http.Request) {
	s := a.v.Status()
	if s.Stalled != "" {
		writeError(w, http.StatusServiceUnavailable, fmt.Sprintf("not ready: cuts are not becoming durable: %s (applied up to %d, durable up to %d; %d commits tried again)", s.Stalled, s.AppliedSeq, s.CommittedSeq, s.CommitRetries))
		return
	}
	if !s.Ready {
		writeError(w, http.StatusServiceUnavailable, fmt.Sprintf("not ready: applied up to %d, log at %d (lag %d)", s.AppliedSeq, s.StreamLastSeq, s.Lag))
		return
	}
	writeJSON(w, http.StatusOK, map[string]any{"ready": true, "applied_seq": s.AppliedSeq, "lag": s.Lag})
}

func (a *api) metrics(w http.ResponseWriter, r *http.Request) {
	a.opts.Metrics.SyncStatus(a.v.Status())
	if a.opts.Webhook != nil {
		a.opts.Metrics.SyncWebhook(a.opts.Webhook.Stats())
	}
	w.Header().Set("Content-Type", MetricsContentType)
	if r.Method == http.MethodHead {
		return
	}
	a.opts.Metrics.WriteTo(w)
}

// BuildVersion is the version of the running binary as the Go tool
// recorded it: the main module's version ("(devel)" for a build from a
// working tree) and, when known, the commit it was built from, with
// "+dirty" when the tree had changes.
func BuildVersion() string {
	bi, ok := debug.ReadBuildInfo()
	if !ok {
		return "unknown"
	}
	v := bi.Main.Version
	if v == "" {
		v = "(devel)"
	}
	var rev string
	dirty := false
	for _, s := range bi.Settings {
		switch s.Key {
		case "vcs.revision":
			rev = s.Value
		case "vcs.modified":
			dirty = s.Value == "true"
		}
	}
	if rev != "" {
		v += " " + rev[:min(len(rev), 12)]
		if dirty {
			v += "+dirty"
		}
	}
	return v
}
