package api

import (
	"bytes"
	"cmp"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"net/http"
	"net/url"
	"slices"
	"strings"
	"time"

	"orbitwatch/storage"
)

// triageJSON is an alert's verdict as the API shows it.
type triageJSON struct {
	Verdict string    `json:"verdict"`
	Note    string    `json:"note"`
	By      string    `json:"by"`
	Role    string    `json:"role"`
	At      time.Time `json:"at"`
}

func triageOf(v storage.Verdict) *triageJSON {
	return &triageJSON{Verdict: v.Verdict, Note: v.Note, By: v.By, Role: v.Role, At: v.At}
}

// withTriage returns the stored alert body (a JSON object) with the key
// "triage" added: the verdict in force, or null.
func withTriage(body []byte, t *triageJSON) json.RawMessage {
	tb, err := json.Marshal(t)
	if err != nil {
		panic("api: a verdict does not encode as JSON: " + err.Error())
	}
	body = bytes.TrimSpace(body)
	if len(body) < 2 || body[0] != '{' || body[len(body)-1] != '}' {
		panic("api: a stored alert body is not a JSON object")
	}
	out := make([]byte, 0, len(body)+len(tb)+12)
	out = append(out, body[:len(body)-1]...)
	if len(bytes.TrimSpace(body[1:len(body)-1])) > 0 {
		out = append(out, ',')
	}
	out = append(out, `"triage":`...)
	out = append(out, tb...)
	return append(out, '}')
}

// verdictFilter is the alerts list's ?verdict=: one of the verdicts, or
// "none" for alerts nobody has triaged yet.
const verdictNone = "none"

func verdictChoices() string {
	return strings.Join(append(slices.Clone(storage.VerdictNames), verdictNone), ", ")
}

// triaged lists the alerts f selects that carry verdict, newest first,
// from the verdicts (each names its alert's cut, so no alert scan).
func (a *api) triaged(f storage.AlertFilter, verdict string, vs map[string]storage.Verdict) ([]storage.AlertRecord, error) {
	st := a.v.Store()
	var keep []storage.Verdict
	for _, v := range vs {
		if v.Verdict != verdict || (f.Node != "" && v.Node != f.Node) || (f.Rule != "" && v.Rule != f.Rule) ||
			v.AlertSeq <= f.SinceSeq || v.EventTime.Before(f.SinceTime) || (!f.UntilTime.IsZero() && v.EventTime.After(f.UntilTime)) {
			continue
		}
		keep = append(keep, v)
	}
	slices.SortFunc(keep, func(x, y storage.Verdict) int {
		if x.AlertSeq != y.AlertSeq {
			return cmp.Compare(y.AlertSeq, x.AlertSeq)
		}
		return strings.Compare(y.AlertID, x.AlertID)
	})
	var out []storage.AlertRecord
	for _, v := range keep[:min(len(keep), f.Limit)] {
		rec, err := st.Alert(v.AlertSeq, v.AlertID)
		if err != nil {
			return nil, err
		}
		out = append(out, rec)
	}
	return out, nil
}

// untriaged lists the alerts f selects that carry no verdict: at most
// len(vs) alerts of the first Limit+len(vs) have one.
func (a *api) untriaged(f storage.AlertFilter, vs map[string]storage.Verdict) ([]storage.AlertRecord, error) {
	limit := f.Limit
	f.Limit += len(vs)
	recs, err := a.v.Store().Alerts(f)
	if err != nil {
		return nil, err
	}
	out := recs[:0]
	for _, r := range recs {
		if _, ok := vs[r.ID]; !ok && len(out) < limit {
			out = append(out, r)
		}
	}
	return out, nil
}

// alertRequest reads the alert id of the path and finds the alert in
// this worker's store, answering 404 when it holds none of that id.
func (a *api) alertRequest(w http.ResponseWriter, r *http.Request) (storage.AlertRecord, bool) {
	id := r.PathValue("id")
	rec, err := a.v.Store().FindAlert(id)
	if errors.Is(err, storage.ErrNoAlert) {
		self, n := a.v.Shard()
		msg := fmt.Sprintf("no alert %s on this worker", quoted(id))
		if n > 1 {
			msg += fmt.Sprintf(" (shard %d of %d: an alert is kept by the worker that owns its node)", self, n)
		}
		writeError(w, http.StatusNotFound, msg)
		return rec, false
	}
	if err != nil {
		a.internal(w, "alert "+quoted(id), err)
		return rec, false
	}
	return rec, true
}

// oneAlert answers GET /v1/alerts/{id}: the alert with its verdict in
// force ("triage") and every verdict given, oldest first
// ("triage_history").
func (a *api) oneAlert(w http.ResponseWriter, r *http.Request) {
	q := r.URL.Query()
	if !queryKeys(w, q, "local") {
		return
	}
	local, ok := queryLocal(w, q)
	if !ok {
		return
	}
	if id := r.PathValue("id"); !local && a.hasPeers() {
		if _, err := a.v.Store().FindAlert(id); errors.Is(err, storage.ErrNoAlert) {
			if i, m := a.peerAlert(r, id); i >= 0 {
				writeJSON(w, http.StatusOK, m)
			} else {
				writeError(w, http.StatusNotFound, fmt.Sprintf("no alert %s on this worker or on the peers that answered", quoted(id)))
			}
			return
		}
	}
	rec, ok := a.alertRequest(w, r)
	if !ok {
		return
	}
	hist, err := a.v.Store().VerdictHistory(rec.ID)
	if err != nil {
		a.internal(w, "verdicts of "+quoted(rec.ID), err)
		return
	}
	var now *triageJSON
	list := make([]*triageJSON, len(hist))
	for i, v := range hist {
		list[i] = triageOf(v)
		now = list[i]
	}
	body := withTriage(rec.Body, now)
	hb, _ := json.Marshal(list)
	body = append(body[:len(body)-1], `,"triage_history":`...)
	body = append(append(body, hb...), '}')
	self, _ := a.v.Shard()
	writeJSON(w, http.StatusOK, struct {
		Shard int             `json:"shard"`
		Alert json.RawMessage `json:"alert"`
	}{self, body})
}

// maxTriageBody caps a verdict's request body: the note and a little.
const maxTriageBody = storage.MaxNoteBytes + 1024

// triage answers POST /v1/alerts/{id}/triage with a JSON body
// {"verdict": "confirmed" | "dismissed" | "needs-more", "note": "…"}:
// the verdict is stored beside the alert with the caller's name and role
// and the time, and replaces the alert's verdict in force (the earlier
// ones stay in its history). It needs an admin caller (the guard refuses
// others before this; an API served without the guard takes no verdict).
func (a *api) triage(w http.ResponseWriter, r *http.Request) {
	if r.Method != http.MethodPost {
		w.Header().Set("Allow", "POST")
		writeError(w, http.StatusMethodNotAllowed, fmt.Sprintf("method %s not allowed; POST a verdict", shorten(r.Method)))
		return
	}
	c, ok := CallerOf(r)
	if !ok || c.Role < RoleAdmin {
		writeError(w, http.StatusForbidden, "a verdict needs an admin credential")
		return
	}
	if !queryKeys(w, r.URL.Query()) {
		return
	}
	var in struct {
		Verdict string `json:"verdict"`
		Note    string `json:"note"`
	}
	b, err := io.ReadAll(io.LimitReader(r.Body, maxTriageBody+1))
	if err != nil {
		writeError(w, http.StatusBadRequest, "the body was not read: "+err.Error())
		return
	}
	if len(b) > maxTriageBody {
		writeError(w, http.StatusRequestEntityTooLarge, fmt.Sprintf("a verdict's body is at most %d bytes", maxTriageBody))
		return
	}
	dec := json.NewDecoder(bytes.NewReader(b))
	dec.DisallowUnknownFields()
	if err := dec.Decode(&in); err != nil {
		writeError(w, http.StatusBadRequest, `want a JSON body {"verdict": "…", "note": "…"}: `+shorten(err.Error()))
		return
	}
	if !slices.Contains(storage.VerdictNames, in.Verdict) {
		writeError(w, http.StatusBadRequest, fmt.Sprintf("verdict %s: want one of %s", quoted(in.Verdict), strings.Join(storage.VerdictNames, ", ")))
		return
	}
	if id := r.PathValue("id"); a.hasPeers() {
		// A verdict is stored beside its alert, on the worker that owns
		// the alert's node: it is sent on there with the caller's own
		// bearer token (or none, from an open loopback API), so the
		// worker that keeps the alert judges the caller itself. A caller
		// known by a client certificate cannot be vouched for that way
		// and is told where to send it.
		if _, err := a.v.Store().FindAlert(id); errors.Is(err, storage.ErrNoAlert) {
			if i, _ := a.peerAlert(r, id); i >= 0 {
				if auth := r.Header.Get("Authorization"); auth != "" || r.TLS == nil {
					a.forwardVerdict(w, r, a.opts.Peers[i], id, auth, b)
					return
				}
				writeError(w, http.StatusMisdirectedRequest, fmt.Sprintf("alert %s is kept by shard %d (%s): send its verdict there", quoted(id), i, a.opts.Peers[i]))
				return
			}
		}
	}
	rec, ok := a.alertRequest(w, r)
	if !ok {
		return
	}
	v, err := a.v.Store().PutVerdict(storage.Verdict{AlertID: rec.ID, AlertSeq: rec.Seq, Verdict: in.Verdict, Note: in.Note, By: c.Name, Role: c.Role.String(), At: time.Now()})
	switch {
	case errors.Is(err, storage.ErrNoAlert):
		writeError(w, http.StatusNotFound, fmt.Sprintf("no alert %s on this worker", quoted(rec.ID)))
		return
	case errors.Is(err, storage.ErrBadVerdict):
		// The store's words for bad input (note too long, not UTF-8).
		writeError(w, http.StatusBadRequest, err.Error())
		return
	case err != nil:
		a.internal(w, "a verdict on "+quoted(rec.ID), err)
		return
	}
	writeJSON(w, http.StatusOK, struct {
		Alert  string      `json:"alert"`
		Triage *triageJSON `json:"triage"`
	}{rec.ID, triageOf(v)})
}

// peerAlert asks every peer for the alert id (each keeps the alerts of
// the nodes it owns) and returns the shard of the first that has it and
// its answer to GET /v1/alerts/{id}; shard -1 when none that answered has.
func (a *api) peerAlert(r *http.Request, id string) (int, json.RawMessage) {
	found := make([]json.RawMessage, len(a.opts.Peers))
	a.eachPeer(func(i int, base string) {
		var m json.RawMessage
		if a.peerGet(r.Context(), base, "/v1/alerts/"+url.PathEscape(id), url.Values{}, &m) == nil {
			found[i] = m
		}
	})
	for i, m := range found {
		if m != nil {
			return i, m
		}
	}
	return -1, nil
}

// forwardVerdict posts the verdict body to the triage endpoint of the
// worker at base for alert id, with the caller's Authorization header
// auth (none when empty), and relays its answer.
func (a *api) forwardVerdict(w http.ResponseWriter, r *http.Request, base, id, auth string, body []byte) {
	status, out, err := a.postPeer(r.Context(), base, id, auth, body)
	if err != nil {
		writeError(w, http.StatusBadGateway, fmt.Sprintf("alert %s is kept by %s, which did not take the verdict: %s", quoted(id), base, shorten(err.Error())))
		return
	}
	w.Header().Set("Content-Type", "application/json")
	w.WriteHeader(status)
	w.Write(out)
}

// postPeer is forwardVerdict's request: the peer's status and body.
func (a *api) postPeer(ctx context.Context, base, id, auth string, body []byte) (int, []byte, error) {
	ctx, cancel := context.WithTimeout(ctx, a.opts.Timeout)
	defer cancel()
	u, err := url.JoinPath(base, "/v1/alerts", url.PathEscape(id), "triage")
	if err != nil {
		return 0, nil, err
	}
	req, err := http.NewRequestWithContext(ctx, http.MethodPost, u, bytes.NewReader(body))
	if err != nil {
		return 0, nil, err
	}
	req.Header.Set("Content-Type", "application/json")
	if auth != "" {
		req.Header.Set("Authorization", auth)
	}
	resp, err := a.opts.PeerClient.Do(req)
	if err != nil {
		return 0, nil, err
	}
	defer resp.Body.Close()
	out, err := io.ReadAll(io.LimitReader(resp.Body, maxPeerBody))
	return resp.StatusCode, out, err
}
