package api

import (
	"context"
	"crypto/tls"
	"encoding/json"
	"net"
	"net/http"
	"net/url"
	"path/filepath"
	"slices"
	"strings"
	"testing"
	"time"

	"orbitwatch/delta/catalog"
	"orbitwatch/shard"
	"orbitwatch/shard/alert"
	"orbitwatch/storage"
)

// listed is an alert as GET /v1/alerts lists it: the stored alert and
// its triage.
type listed struct {
	alert.Alert
	Triage *triageJSON `json:"triage"`
}

func listAlerts(t *testing.T, client *http.Client, base, token, query string) []listed {
	t.Helper()
	code, body := do(t, client, base, call{path: "/v1/alerts" + query, token: token})
	if code != http.StatusOK {
		t.Fatalf("GET /v1/alerts%s: %d %s", query, code, body)
	}
	var out struct{ Alerts []listed }
	if err := json.Unmarshal([]byte(body), &out); err != nil {
		t.Fatal(err)
	}
	return out.Alerts
}

func postVerdict(t *testing.T, client *http.Client, base, token, id, body string) (int, string) {
	t.Helper()
	return do(t, client, base, call{method: http.MethodPost, path: "/v1/alerts/" + url.PathEscape(id) + "/triage", token: token,
		header: map[string]string{"Content-Type": "application/json"}, body: []byte(body)})
}

// TestTriage: over real HTTP behind a tokens file, an admin's verdict is
// stored with the admin's name and listed with its alert; a reader, a
// caller without a token and bad bodies are refused, each saying why; a
// later verdict is the one in force and the earlier one stays in the
// alert's history; the verdict filter and the time filters select by
// hand-checked sets.
func TestTriage(t *testing.T) {
	stored := storedAlerts()
	v, _ := buildView(t, tailedTriangle(), []uint64{4, 5}, stored)
	s := serve(t, ServerConfig{Addr: "127.0.0.1:0", TokensFile: tokensFile(t)}, New(v, Options{Rules: []string{"ring", "fan-out"}}))
	client, base := http.DefaultClient, s.URL()
	ring, fan4, fan5 := stored[4][1], stored[4][0], stored[5][0]

	for _, c := range []struct {
		token, id, body string
		code            int
		want            string
	}{
		{"", ring.ID, `{"verdict":"confirmed"}`, 401, "bearer token"},
		{readToken, ring.ID, `{"verdict":"confirmed"}`, 403, "admin"},
		{adminToken, ring.ID, `{"verdict":"fraud"}`, 400, "confirmed, dismissed, needs-more"},
		{adminToken, ring.ID, `{"verdict":"confirmed","colour":"red"}`, 400, "colour"},
		{adminToken, ring.ID, `{"verdict":`, 400, "JSON body"},
		{adminToken, ring.ID, `{"verdict":"confirmed","note":"` + strings.Repeat("x", storage.MaxNoteBytes+1) + `"}`, 400, "note of"},
		{adminToken, "0123456789abcdef", `{"verdict":"confirmed"}`, 404, "no alert"},
	} {
		code, body := postVerdict(t, client, base, c.token, c.id, c.body)
		if code != c.code || !strings.Contains(body, c.want) {
			t.Errorf("POST verdict %.60s with token %.6q: %d %s, want %d mentioning %q", c.body, c.token, code, body, c.code, c.want)
		}
	}
	// With several shards, an alert this worker does not hold is said to
	// live with the owner of its node.
	v2, _ := buildView(t, tailedTriangle(), []uint64{4, 5}, stored)
	v2.n = 2
	s2 := serve(t, ServerConfig{Addr: "127.0.0.1:0"}, New(v2, Options{}))
	if code, body := postVerdict(t, client, s2.URL(), "", "0123456789abcdef", `{"verdict":"confirmed"}`); code != 404 || !strings.Contains(body, "shard 0 of 2") || !strings.Contains(body, "owns its node") {
		t.Errorf("verdict on another shard's alert: %d %s", code, body)
	}
	if code, body := do(t, client, base, call{path: "/v1/alerts/" + ring.ID + "/triage", token: adminToken}); code != 405 {
		t.Errorf("GET on the triage endpoint: %d %s", code, body)
	}
	if got := listAlerts(t, client, base, readToken, ""); slices.ContainsFunc(got, func(a listed) bool { return a.Triage != nil }) {
		t.Fatalf("refused verdicts were stored: %+v", got)
	}

	code, body := postVerdict(t, client, base, adminToken, ring.ID, `{"verdict":"needs-more","note":"ask the bank for the statements"}`)
	if code != 200 || !strings.Contains(body, `"by":"oncall"`) {
		t.Fatalf("admin verdict: %d %s", code, body)
	}
	postVerdict(t, client, base, adminToken, ring.ID, `{"verdict":"confirmed","note":"mule ring, case 4417"}`)
	postVerdict(t, client, base, adminToken, fan5.ID, `{"verdict":"dismissed"}`)

	verdictOf := func(as []listed) map[string]string {
		m := map[string]string{}
		for _, a := range as {
			if a.Triage != nil {
				m[a.ID] = a.Triage.Verdict
			}
		}
		return m
	}
	all := listAlerts(t, client, base, readToken, "")
	if got := verdictOf(all); len(all) != 4 || len(got) != 2 || got[ring.ID] != "confirmed" || got[fan5.ID] != "dismissed" {
		t.Fatalf("alerts with verdicts %v (of %d listed)", got, len(all))
	}
	for _, a := range all {
		if a.ID == ring.ID && (a.Triage.Note != "mule ring, case 4417" || a.Triage.By != "oncall" || a.Triage.Role != "admin" || time.Since(a.Triage.At) > time.Minute) {
			t.Errorf("ring's triage %+v", a.Triage)
		}
	}
	ids := func(as []listed) []string {
		var out []string
		for _, a := range as {
			out = append(out, a.ID)
		}
		return out
	}
	untriaged := []string{}
	for _, a := range all {
		if a.Triage == nil {
			untriaged = append(untriaged, a.ID)
		}
	}
	for _, c := range []struct {
		q    string
		want []string
	}{
		{"?verdict=confirmed", []string{ring.ID}},
		{"?verdict=dismissed", []string{fan5.ID}},
		{"?verdict=needs-more", nil},
		{"?verdict=none", untriaged},
		{"?verdict=none&limit=1", untriaged[:1]},
		{"?verdict=dismissed&rule=ring", nil},
		{"?verdict=confirmed&node=" + url.QueryEscape(idSlash), []string{ring.ID}},
		{"?verdict=confirmed&since=4", nil},
		{"?verdict=dismissed&until=2026-03-01T09:05:00Z", nil},
		{"?rule=fan-out&until=2026-03-01T09:05:00Z", []string{fan4.ID}},
		{"?until=2026-03-01T09:03:00Z&since=2026-03-01T09:03:00Z", ids(all[2:])},
	} {
		if got := ids(listAlerts(t, client, base, readToken, c.q)); !slices.Equal(got, c.want) {
			t.Errorf("alerts%s: %v, want %v", c.q, got, c.want)
		}
	}
	for _, q := range []string{"?verdict=fraud", "?until=later"} {
		if code, body := do(t, client, base, call{path: "/v1/alerts" + q, token: readToken}); code != 400 {
			t.Errorf("alerts%s: %d %s", q, code, body)
		}
	}

	// One alert with its history, oldest first.
	code, body = do(t, client, base, call{path: "/v1/alerts/" + ring.ID, token: readToken})
	var one struct {
		Alert struct {
			listed
			History []triageJSON `json:"triage_history"`
		}
	}
	if err := json.Unmarshal([]byte(body), &one); code != 200 || err != nil {
		t.Fatalf("one alert: %d %s %v", code, body, err)
	}
	if h := one.Alert.History; len(h) != 2 || h[0].Verdict != "needs-more" || h[1].Verdict != "confirmed" || one.Alert.Triage.Verdict != "confirmed" || one.Alert.Node != idSlash {
		t.Errorf("one alert: %s", body)
	}
}

// TestTriageSurvivesWorkerRestart: a real worker follows a real
// JetStream log into a real Badger directory and raises alerts; an
// admin's verdicts given over HTTP are listed again, unchanged, after the
// worker is stopped and a new one started on the same directory.
func TestTriageSurvivesWorkerRestart(t *testing.T) {
	ctx, cancel := context.WithTimeout(context.Background(), 2*time.Minute)
	defer cancel()
	dir := t.TempDir()
	const name, subject = "TRIAGELOG", "triagelog.events"
	events := paymentsLog(9, 600)
	nc := publishLog(t, ctx, dir, name, subject, events)
	cuts := shard.Cuts{Every: time.Hour}
	c := undirected4(t)
	cat, err := catalog.New(c.Catalog.Kind, c.Catalog.MaxNodes)
	if err != nil {
		t.Fatal(err)
	}
	// A rule every busy shop meets: alerts to triage, not a test of rules.
	cfg, err := alert.ParseConfig([]byte("baseline: decayed\nrules:\n  - name: busy\n    kind: orbit-count\n    orbit: centre of 3-star\n    fire: 30\n"), cat)
	if err != nil {
		t.Fatal(err)
	}
	tokens := tokensFile(t)

	// run starts a worker on the store in dir/state, waits until it has
	// applied the whole log with its last cut durable, and serves its API;
	// stop ends both and closes the store.
	run := func() (base string, stop func()) {
		st := openStoreNoCleanup(t, c, filepath.Join(dir, "state"))
		w, err := shard.NewWorker(shard.WorkerConfig{Conn: nc, Stream: name, Subject: subject, Shard: 0, Shards: 1, Counting: c, Cuts: cuts, Store: st, Alerts: alert.New(cfg, cat)})
		if err != nil {
			t.Fatal(err)
		}
		h := New(w, Options{Rules: []string{"busy"}})
		wctx, wstop := context.WithCancel(ctx)
		done := make(chan error, 1)
		go func() { done <- w.Run(wctx) }()
		for s := w.Status(); s.AppliedSeq < uint64(len(events)) || s.CommittedSeq < s.CutSeq; s = w.Status() {
			select {
			case err := <-done:
				t.Fatalf("worker stopped: %v", err)
			case <-ctx.Done():
				t.Fatalf("worker at %+v", s)
			case <-time.After(10 * time.Millisecond):
			}
		}
		s, err := Listen(ServerConfig{Addr: "127.0.0.1:0", TokensFile: tokens})
		if err != nil {
			t.Fatal(err)
		}
		go s.Serve(h)
		return s.URL(), func() {
			sctx, scancel := context.WithTimeout(context.Background(), 5*time.Second)
			defer scancel()
			s.Shutdown(sctx)
			wstop()
			if err := <-done; err != nil {
				t.Errorf("worker: %v", err)
			}
			if err := st.Close(); err != nil {
				t.Error(err)
			}
		}
	}
	client := http.DefaultClient
	base, stop := run()
	before := listAlerts(t, client, base, readToken, "?limit=1000")
	if len(before) < 3 {
		t.Fatalf("%d alerts raised: too few to triage", len(before))
	}
	given := map[string]string{before[0].ID: "confirmed", before[1].ID: "dismissed", before[len(before)-1].ID: "needs-more"}
	for id, verdict := range given {
		if code, body := postVerdict(t, client, base, adminToken, id, `{"verdict":"`+verdict+`","note":"checked by hand"}`); code != 200 {
			t.Fatalf("verdict on %s: %d %s", id, code, body)
		}
	}
	mid := listAlerts(t, client, base, readToken, "?limit=1000")
	stop()

	base, stop = run()
	defer stop()
	after := listAlerts(t, client, base, readToken, "?limit=1000")
	if len(after) != len(before) {
		t.Fatalf("%d alerts after the restart, %d before", len(after), len(before))
	}
	for i, a := range after {
		want := given[a.ID]
		switch {
		case a.ID != mid[i].ID:
			t.Fatalf("alert %d is %s after the restart, %s before", i, a.ID, mid[i].ID)
		case want == "" && a.Triage != nil:
			t.Errorf("%s gained a verdict: %+v", a.ID, a.Triage)
		case want != "" && (a.Triage == nil || *a.Triage != *mid[i].Triage || a.Triage.Verdict != want):
			t.Errorf("%s after the restart: %+v, before %+v, given %s", a.ID, a.Triage, mid[i].Triage, want)
		}
	}
	if got := listAlerts(t, client, base, readToken, "?verdict=confirmed"); len(got) != 1 || got[0].ID != before[0].ID {
		t.Errorf("confirmed after the restart: %+v", got)
	}
}

// openStoreNoCleanup opens a store the test closes itself (a restart
// reopens the same directory).
func openStoreNoCleanup(t testing.TB, c *shard.Counting, dir string) *storage.Store {
	t.Helper()
	st, err := storage.Open(dir, storage.Settings{Kind: c.Catalog.Kind, MaxNodes: c.Catalog.MaxNodes, NumOrbits: c.Catalog.NumOrbits()})
	if err != nil {
		t.Fatal(err)
	}
	return st
}

// TestAlertsAcrossShards: three workers, each holding the alerts of its
// own nodes, behind tokens. A worker given its peers lists all three's
// alerts newest first (the order one store holding them all would give),
// cut to the limit, and names a peer that does not answer; local=true
// lists its own. One alert is found on whichever shard holds it, and a
// verdict sent to the wrong worker is told which shard to send it to.
func TestAlertsAcrossShards(t *testing.T) {
	stored := storedAlerts()
	mine := []map[uint64][]alert.Alert{
		{4: {stored[4][0]}},
		{4: {stored[4][1]}, 5: {stored[5][0]}},
		{5: {stored[5][1]}},
	}
	tokens := tokensFile(t)
	rules := Options{Rules: []string{"ring", "fan-out"}}
	views := make([]*applierView, 3)
	urls := make([]string, 4)
	for i := range views {
		views[i], _ = buildView(t, tailedTriangle(), []uint64{4, 5}, mine[i])
		views[i].i, views[i].n = i, 3
		if i > 0 {
			urls[i] = serve(t, ServerConfig{Addr: "127.0.0.1:0", TokensFile: tokens}, New(views[i], rules)).URL()
		}
	}
	dead, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	urls[3] = "http://" + dead.Addr().String()
	dead.Close()
	opts := Options{Rules: rules.Rules, Peers: urls[:3], PeerToken: readToken, Timeout: 2 * time.Second}
	s0 := serve(t, ServerConfig{Addr: "127.0.0.1:0", TokensFile: tokens}, New(views[0], opts))
	client, base := http.DefaultClient, s0.URL()

	// What one store holding every alert lists (TestAPIAlerts holds that
	// store's order: by cut, then by id, newest first).
	all, _ := buildView(t, tailedTriangle(), []uint64{4, 5}, stored)
	whole := serve(t, ServerConfig{Addr: "127.0.0.1:0", TokensFile: tokens}, New(all, rules)).URL()
	key := func(as []listed) []string {
		var out []string
		for _, a := range as {
			out = append(out, a.ID)
		}
		return out
	}
	for _, q := range []string{"", "?limit=2", "?rule=fan-out", "?since=4"} {
		got, want := key(listAlerts(t, client, base, readToken, q)), key(listAlerts(t, client, whole, readToken, q))
		if len(want) == 0 || !slices.Equal(got, want) {
			t.Errorf("alerts%s across shards: %v, one store: %v", q, got, want)
		}
	}
	_, body := do(t, client, base, call{path: "/v1/alerts", token: readToken})
	var out alertsJSON
	if err := json.Unmarshal([]byte(body), &out); err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(out.Shards, []int{0, 1, 2}) || len(out.Errors) != 0 {
		t.Errorf("shards %v, errors %v", out.Shards, out.Errors)
	}
	if got := key(listAlerts(t, client, base, readToken, "?local=true")); !slices.Equal(got, []string{stored[4][0].ID}) {
		t.Errorf("local alerts of shard 0: %v", got)
	}
	withDead := serve(t, ServerConfig{Addr: "127.0.0.1:0", TokensFile: tokens}, New(views[0], Options{Rules: rules.Rules, Peers: urls, PeerToken: readToken, Timeout: 2 * time.Second}))
	_, body = do(t, client, withDead.URL(), call{path: "/v1/alerts", token: readToken})
	out = alertsJSON{}
	if err := json.Unmarshal([]byte(body), &out); err != nil {
		t.Fatal(err)
	}
	if len(out.Alerts) != 4 || len(out.Errors) != 1 || !strings.Contains(out.Errors[0], "shard 3 ("+urls[3]+")") {
		t.Errorf("with a dead peer: %d alerts, errors %v", len(out.Alerts), out.Errors)
	}

	far := stored[5][1] // kept by shard 2
	code, body := do(t, client, base, call{path: "/v1/alerts/" + far.ID, token: readToken})
	if code != 200 || !strings.Contains(body, `"id":"`+far.ID+`"`) || !strings.Contains(body, `"shard":2`) {
		t.Errorf("GET another shard's alert: %d %s", code, body)
	}
	if code, body := do(t, client, base, call{path: "/v1/alerts/" + far.ID + "?local=true", token: readToken}); code != 404 {
		t.Errorf("GET another shard's alert, local: %d %s", code, body)
	}
	if code, body := do(t, client, base, call{path: "/v1/alerts/0123456789abcdef", token: readToken}); code != 404 || !strings.Contains(body, "peers") {
		t.Errorf("GET an alert no shard has: %d %s", code, body)
	}
	// A verdict sent to another worker is stored by the one that keeps
	// the alert, under the caller's own token: a reader is refused there
	// and here alike.
	if code, body := postVerdict(t, client, base, readToken, far.ID, `{"verdict":"confirmed"}`); code != 403 {
		t.Errorf("reader's verdict via another shard: %d %s", code, body)
	}
	code, body = postVerdict(t, client, base, adminToken, far.ID, `{"verdict":"confirmed","note":"sent to shard 0"}`)
	if code != 200 || !strings.Contains(body, `"by":"oncall"`) {
		t.Errorf("verdict sent to another shard: %d %s", code, body)
	}
	kept := listAlerts(t, client, urls[2], readToken, "?local=true")
	if len(kept) != 1 || kept[0].Triage == nil || kept[0].Triage.Verdict != "confirmed" || kept[0].Triage.Note != "sent to shard 0" {
		t.Errorf("shard 2 after the forwarded verdict: %+v", kept)
	}
	if own := listAlerts(t, client, base, readToken, "?local=true&verdict=confirmed"); len(own) != 0 {
		t.Errorf("shard 0 stored a verdict on an alert it does not keep: %+v", own)
	}
	// A caller known by a client certificate cannot be vouched for to the
	// peer: it is told where to send the verdict.
	p := newPKI(t)
	tlsBase := serve(t, ServerConfig{Addr: "127.0.0.1:0", CertFile: p.serverCert, KeyFile: p.serverKey, ClientCAFile: p.caFile, TokensFile: tokens}, New(views[0], opts)).URL()
	cert := p.client(t, "ops-desk.payments.internal", p.ca, p.caKey)
	certClient := &http.Client{Transport: &http.Transport{TLSClientConfig: &tls.Config{RootCAs: p.pool, Certificates: []tls.Certificate{cert}}}, Timeout: 10 * time.Second}
	code, body = postVerdict(t, certClient, tlsBase, "", far.ID, `{"verdict":"dismissed"}`)
	if code != http.StatusMisdirectedRequest || !strings.Contains(body, "shard 2 ("+urls[2]+")") {
		t.Errorf("certificate caller's verdict on another shard's alert: %d %s", code, body)
	}
}
