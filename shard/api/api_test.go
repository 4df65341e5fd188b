package api

import (
	"encoding/json"
	"fmt"
	"net/http"
	"net/http/httptest"
	"net/url"
	"slices"
	"strings"
	"sync"
	"testing"
	"time"

	"orbitwatch/shard"
	"orbitwatch/shard/alert"
	"orbitwatch/storage"
)

func TestAPINodeReadsHandChecked(t *testing.T) {
	v, snaps := buildView(t, tailedTriangle(), []uint64{4, 5}, nil)
	h := New(v, Options{})
	// Orbit vectors counted by hand from the Pržulj 2007 numbering (DESIGN.md
	// §6): in a tailed triangle the tail end is orbit 9, the two degree-2
	// nodes orbit 10 and the degree-3 node orbit 11; in a 3-star the leaves
	// are orbit 6 and the centre orbit 7. Orbit 0 is the degree, 1/2 the
	// end/middle of induced 3-paths, 3 the triangle.
	tailed := map[string][]uint64{ // cut 4: triangle slash, unicode, percent; tail query
		idSlash:   orbits(0, 2, 1, 1, 3, 1, 10, 1),
		idUnicode: orbits(0, 2, 1, 1, 3, 1, 10, 1),
		idPercent: orbits(0, 3, 2, 2, 3, 1, 11, 1),
		idQuery:   orbits(0, 1, 1, 2, 9, 1),
	}
	star := map[string][]uint64{ // cut 5: centre percent
		idSlash:   orbits(0, 1, 1, 2, 6, 1),
		idUnicode: orbits(0, 1, 1, 2, 6, 1),
		idPercent: orbits(0, 3, 2, 3, 7, 1),
		idQuery:   orbits(0, 1, 1, 2, 6, 1),
	}
	now := map[string][]uint64{ // seq 6, no cut: triangle percent, slash, query; tail unicode
		idSlash:   orbits(0, 2, 1, 1, 3, 1, 10, 1),
		idQuery:   orbits(0, 2, 1, 1, 3, 1, 10, 1),
		idPercent: orbits(0, 3, 2, 2, 3, 1, 11, 1),
		idUnicode: orbits(0, 1, 1, 2, 9, 1),
	}
	// The hand counts and the static recount agree (two sources).
	for i, want := range []map[string][]uint64{tailed, star, now} {
		for id, w := range want {
			if !slices.Equal(snaps[i].vectors[id], w) {
				t.Fatalf("state %d, %q: recount %v, hand count %v", i, id, snaps[i].vectors[id], w)
			}
		}
	}
	cases := []struct {
		query string
		seq   uint64
		wm    time.Time
		want  map[string][]uint64
	}{
		{"", 6, apiT0.Add(12 * time.Minute), now},
		{"?seq=5", 5, apiT0.Add(10 * time.Minute), star},
		{"?seq=1000", 5, apiT0.Add(10 * time.Minute), star},
		{"?seq=18446744073709551615", 5, apiT0.Add(10 * time.Minute), star},
		{"?seq=4", 4, apiT0.Add(3 * time.Minute), tailed},
		// as of an event time: the latest cut whose watermark is ≤ it.
		{"?at=" + url.QueryEscape(apiT0.Add(3*time.Minute).Format(time.RFC3339)), 4, apiT0.Add(3 * time.Minute), tailed},
		{"?at=" + url.QueryEscape(apiT0.Add(9*time.Minute+59*time.Second).Format(time.RFC3339)), 4, apiT0.Add(3 * time.Minute), tailed},
		{"?at=" + fmt.Sprint(apiT0.Add(10*time.Minute).Unix()), 5, apiT0.Add(10 * time.Minute), star},
		{"?at=2030-01-01T00:00:00%2B02:00", 5, apiT0.Add(10 * time.Minute), star},
		{"?at=2026-03-01%2009:03:00", 4, apiT0.Add(3 * time.Minute), tailed},
	}
	for _, tc := range cases {
		for id, want := range tc.want {
			b := readNode(t, h, nodePath(id)+tc.query)
			if b.Node != id || b.Kind != "undirected" || b.MaxNodes != 4 || b.Seq != tc.seq {
				t.Errorf("%q%s: node %q kind %q max %d seq %d, want seq %d", id, tc.query, b.Node, b.Kind, b.MaxNodes, b.Seq, tc.seq)
			}
			if b.EventTime == nil || !b.EventTime.Equal(tc.wm) {
				t.Errorf("%q%s: event_time %v, want %v", id, tc.query, b.EventTime, tc.wm)
			}
			if !slices.Equal(b.Orbits, want) {
				t.Errorf("%q%s: orbits %v, want %v", id, tc.query, b.Orbits, want)
			}
		}
	}
	// The id written with its '/' unescaped reads the same node.
	if b := readNode(t, h, "/v1/nodes/shop/north%201"); b.Node != idSlash {
		t.Errorf("unescaped slash: node %q", b.Node)
	}
	if _, hdr, _ := get(t, h, nodePath(idSlash)); hdr.Get(ShardHeader) != "0" {
		t.Errorf("%s header %q, want 0", ShardHeader, hdr.Get(ShardHeader))
	}
	get := http.MethodGet
	wantError(t, h, get, nodePath("nobody"), http.StatusNotFound, `unknown node "nobody"`)
	wantError(t, h, get, nodePath(idQuery)+"?seq=3", http.StatusNotFound, "no complete cut")
	wantError(t, h, get, nodePath(idQuery)+"?at=2026-03-01T08:59:00Z", http.StatusNotFound, "no complete cut")
	wantError(t, h, get, nodePath(idQuery)+"?at=yesterday", http.StatusBadRequest, "yesterday")
	wantError(t, h, get, nodePath(idQuery)+"?seq=-1", http.StatusBadRequest, "seq")
	wantError(t, h, get, nodePath(idQuery)+"?seq=0", http.StatusBadRequest, "seq")
	wantError(t, h, get, nodePath(idQuery)+"?seq=4&at=2026-03-01T09:00:00Z", http.StatusBadRequest, "not both")
	wantError(t, h, get, nodePath(idQuery)+"?as_of=4", http.StatusBadRequest, "as_of")
	wantError(t, h, get, "/v1/nodes/", http.StatusNotFound, "no node id")
	wantError(t, h, get, "/v2/everything", http.StatusNotFound, "/v2/everything")
	wantError(t, h, get, "/v1/nodes/%FF%FE", http.StatusNotFound, "UTF-8")
	wantError(t, h, http.MethodPost, nodePath(idQuery), http.StatusMethodNotAllowed, "use GET")
	if _, hdr, _ := request(t, h, http.MethodPost, nodePath(idQuery)); hdr.Get("Allow") != "GET, HEAD" {
		t.Errorf("405 Allow %q", hdr.Get("Allow"))
	}
}

// TestAPIErrorsStaySmall: an answer repeats at most a short prefix of a
// long id, path or parameter, with its length, however long the request.
func TestAPIErrorsStaySmall(t *testing.T) {
	v, _ := buildView(t, tailedTriangle(), []uint64{4, 5}, nil)
	h := New(v, Options{})
	huge := strings.Repeat("é", 30000) // 60,000 bytes
	for _, c := range []struct {
		path string
		code int
	}{
		{nodePath(huge), http.StatusNotFound},
		{nodePath(huge) + "/history", http.StatusNotFound},
		{nodePath(huge[:1024]), http.StatusNotFound},            // at the id limit: read, unknown
		{nodePath(huge[:1024]) + "?seq=5", http.StatusNotFound}, // the same, as of a cut
		{"/v9/" + url.PathEscape(huge), http.StatusNotFound},
		{nodePath(idSlash) + "?" + url.QueryEscape(huge) + "=1", http.StatusBadRequest},
		{nodePath(idSlash) + "?at=" + url.QueryEscape(huge), http.StatusBadRequest},
		{"/v1/alerts?rule=" + url.QueryEscape(huge), http.StatusBadRequest},
	} {
		code, _, body := get(t, h, c.path)
		if code != c.code || len(body) > 400 {
			t.Errorf("GET %.60s…: %d with %d bytes, want %d and a short body: %.200s", c.path, code, len(body), c.code, body)
		}
		if !strings.Contains(string(body), "bytes)") {
			t.Errorf("GET %.60s…: %s does not give the input's length", c.path, body)
		}
	}
}

// TestAPIInternalErrorsHidden stores a record that does not decode, as a
// damaged store would hold it: the as-of read and the history answer 500
// with words for a client, while Logf hears the store's own message.
func TestAPIInternalErrorsHidden(t *testing.T) {
	v, _ := buildView(t, tailedTriangle()[:4], []uint64{4}, nil)
	x, _ := v.a.Lookup(idPercent)
	if err := v.st.Commit(&storage.Checkpoint{Seq: 9, Watermark: apiT0.Add(20 * time.Minute), Blobs: map[string][]byte{},
		Records: []storage.RecordChange{{Node: x, Data: []byte{0xff, 0xff, 0xff, 0xff, 0xff, 0xff, 0xff, 0xff, 0xff, 0xff, 0xff}}}}); err != nil {
		t.Fatal(err)
	}
	var mu sync.Mutex
	var logged []string
	h := New(v, Options{Logf: func(f string, a ...any) { mu.Lock(); logged = append(logged, fmt.Sprintf(f, a...)); mu.Unlock() }})
	for _, path := range []string{nodePath(idPercent) + "?seq=9", nodePath(idPercent) + "/history"} {
		msg := wantError(t, h, http.MethodGet, path, http.StatusInternalServerError, "internal error")
		for _, leak := range []string{"storage", "record", "decode", "badger", "9"} {
			if strings.Contains(msg, leak) {
				t.Errorf("GET %s: %q shows %q", path, msg, leak)
			}
		}
	}
	mu.Lock()
	defer mu.Unlock()
	if len(logged) != 2 || !strings.Contains(logged[0], idPercent) {
		t.Errorf("logged %q, want the two causes", logged)
	}
	// Before the damaged cut the same node reads fine.
	if b := readNode(t, h, nodePath(idPercent)+"?seq=4"); b.Seq != 4 {
		t.Errorf("read before the damaged cut: %+v", b)
	}
}

func TestAPIEventTimeNullWithoutTimes(t *testing.T) {
	events := tailedTriangle()[:2]
	for i := range events {
		events[i].HasTS, events[i].TS = false, time.Time{}
	}
	v, _ := buildView(t, events, []uint64{2}, nil)
	h := New(v, Options{})
	for _, q := range []string{"", "?seq=2"} {
		_, _, body := get(t, h, nodePath(idUnicode)+q)
		m := decodeStrict(t, body, "node", "kind", "max_nodes", "seq", "event_time", "orbits")
		if string(m["event_time"]) != "null" {
			t.Errorf("%s: event_time %s, want null", q, m["event_time"])
		}
		// unicode is the middle of the 3-path slash–unicode–percent:
		// degree 2, orbit 2 once (counted by hand).
		if string(m["orbits"]) != "[2,0,1,0,0,0,0,0,0,0,0,0,0,0,0]" {
			t.Errorf("%s: orbits %s", q, m["orbits"])
		}
	}
}

// TestAPIAsOfEveryCut reads every node as of every cut of a seeded
// payments log and compares with the static recount of the graph at that
// cut; nodes that appear later are unknown as of earlier cuts.
func TestAPIAsOfEveryCut(t *testing.T) {
	cuts := []uint64{100, 250, 400, 600}
	v, snaps := buildView(t, paymentsLog(1, 600), cuts, nil)
	h := New(v, Options{})
	for _, s := range snaps[:len(cuts)] {
		for _, q := range []string{"?seq=" + fmt.Sprint(s.seq), "?at=" + url.QueryEscape(s.watermark.Format(time.RFC3339Nano))} {
			for node, want := range s.vectors {
				b := readNode(t, h, nodePath(node)+q)
				if b.Seq != s.seq || !slices.Equal(b.Orbits, want) {
					t.Fatalf("%s%s: seq %d %v, want seq %d %v (recount)", node, q, b.Seq, b.Orbits, s.seq, want)
				}
			}
		}
	}
	last := snaps[len(snaps)-1]
	for node, want := range last.vectors {
		if b := readNode(t, h, nodePath(node)); b.Seq != 600 || !slices.Equal(b.Orbits, want) {
			t.Fatalf("%s now: %+v, want %v", node, b, want)
		}
	}
	seen := false
	for node := range last.vectors {
		if _, ok := snaps[0].vectors[node]; !ok {
			wantError(t, h, http.MethodGet, nodePath(node)+"?seq=100", http.StatusNotFound, "unknown node")
			seen = true
			break
		}
	}
	if !seen {
		t.Fatal("no node first seen after the first cut; pick another seed")
	}
}

// TestAPIHistory reads a node's versions back at both cuts and compares
// them with the recount there; the event applied after the last cut is
// not history yet.
func TestAPIHistory(t *testing.T) {
	v, snaps := buildView(t, tailedTriangle(), []uint64{4, 5}, nil)
	h := New(v, Options{})
	type hist struct {
		Node     string
		Kind     string
		MaxNodes int `json:"max_nodes"`
		Versions []struct {
			Seq       uint64
			EventTime *time.Time `json:"event_time"`
			Orbits    []uint64
		}
	}
	read := func(q string) hist {
		t.Helper()
		code, _, body := get(t, h, nodePath(idPercent)+"/history"+q)
		if code != http.StatusOK {
			t.Fatalf("history%s: %d %s", q, code, body)
		}
		var out hist
		if err := json.Unmarshal(body, &out); err != nil {
			t.Fatal(err)
		}
		return out
	}
	all := read("")
	if all.Node != idPercent || all.Kind != "undirected" || all.MaxNodes != 4 || len(all.Versions) != 2 {
		t.Fatalf("history: %+v", all)
	}
	for i, v := range all.Versions {
		if v.Seq != snaps[i].seq || !slices.Equal(v.Orbits, snaps[i].vectors[idPercent]) || !v.EventTime.Equal(snaps[i].watermark) {
			t.Fatalf("version %d: %+v, want seq %d %v at %s", i, v, snaps[i].seq, snaps[i].vectors[idPercent], snaps[i].watermark)
		}
	}
	// Up to minute 5: only the first cut (watermark minute 3).
	if first := read("?to=" + apiT0.Add(5*time.Minute).Format(time.RFC3339)); len(first.Versions) != 1 || first.Versions[0].Seq != 4 {
		t.Fatalf("history to minute 5: %+v", first)
	}
	// From minute 5: the version in force then (cut 4) and the next.
	if from := read("?from=" + apiT0.Add(5*time.Minute).Format(time.RFC3339)); len(from.Versions) != 2 {
		t.Fatalf("history from minute 5: %+v", from)
	}
	if last := read("?limit=1"); len(last.Versions) != 1 || last.Versions[0].Seq != 5 {
		t.Fatalf("history limit 1: %+v", last)
	}
	for _, q := range []string{"?limit=0", "?from=yesterday", "?seq=4"} {
		wantError(t, h, http.MethodGet, nodePath(idPercent)+"/history"+q, http.StatusBadRequest, "")
	}
	wantError(t, h, http.MethodGet, nodePath("nobody")+"/history", http.StatusNotFound, `no node "nobody"`)
	wantError(t, h, http.MethodGet, nodePath(idPercent)+"/history?to=2026-03-01T08:00:00Z", http.StatusNotFound, "no complete cut")
}

func TestAPICatalogAndNeighborsWithoutAdjacency(t *testing.T) {
	v, _ := buildView(t, tailedTriangle(), []uint64{5}, nil)
	h := New(v, Options{})
	code, _, body := get(t, h, "/v1/catalog")
	var cat struct {
		Kind     string
		MaxNodes int `json:"max_nodes"`
		Orbits   []orbitJSON
	}
	if err := json.Unmarshal(body, &cat); code != http.StatusOK || err != nil {
		t.Fatalf("catalog: %d %v", code, err)
	}
	// Pržulj 2007: 15 orbits on 2–4 nodes, orbit 14 the K4, 8 the 4-cycle.
	if cat.Kind != "undirected" || cat.MaxNodes != 4 || len(cat.Orbits) != 15 || cat.Orbits[14].Name != "K4" || cat.Orbits[8].Graphlet != "4-cycle" {
		t.Fatalf("catalog: %+v", cat)
	}
	if k4, c4, e := cat.Orbits[14], cat.Orbits[8], cat.Orbits[0]; k4.Nodes != 4 || k4.Ties != 6 || c4.Ties != 4 || e.Nodes != 2 || e.Ties != 1 || k4.NegativeTies != 0 {
		t.Fatalf("catalog sizes: K4 %+v, 4-cycle %+v, edge %+v", k4, c4, e)
	}
	for i, o := range cat.Orbits {
		if o.ID != i {
			t.Fatalf("catalog orbit %d has id %d", i, o.ID)
		}
	}
	// A view that reads no adjacency answers now-reads with 501 and as-of
	// reads from the store.
	bare := New(struct{ shard.View }{v}, Options{})
	wantError(t, bare, http.MethodGet, nodePath(idPercent)+"/neighbors", http.StatusNotImplemented, "adjacency")
	if code, _, body := get(t, bare, nodePath(idPercent)+"/neighbors?seq=5"); code != http.StatusOK {
		t.Errorf("neighbours as of a cut from a view without adjacency: %d %s", code, body)
	}
}

// storedAlerts are alerts as the evaluator makes them, two cuts' worth.
func storedAlerts() map[uint64][]alert.Alert {
	mk := func(rule, node string, seq uint64, minute int) alert.Alert {
		return alert.Alert{ID: alert.AlertID(rule, node, seq), Rule: rule, Kind: "orbit-count", Node: node, Seq: seq,
			EventTime: apiT0.Add(time.Duration(minute) * time.Minute), Score: 4, Fire: 3, Baseline: "none", Degree: 3}
	}
	return map[uint64][]alert.Alert{
		4: {mk("fan-out", idPercent, 4, 3), mk("ring", idSlash, 4, 3)},
		5: {mk("fan-out", idPercent, 5, 10), mk("old-rule", idQuery, 5, 10)},
	}
}

func TestAPIAlerts(t *testing.T) {
	stored := storedAlerts()
	v, _ := buildView(t, tailedTriangle(), []uint64{4, 5}, stored)
	h := New(v, Options{Rules: []string{"ring", "fan-out", "signature"}})
	ids := func(q string) []string {
		t.Helper()
		code, _, body := get(t, h, "/v1/alerts"+q)
		if code != http.StatusOK {
			t.Fatalf("alerts%s: %d %s", q, code, body)
		}
		m := decodeStrict(t, body, "shard", "alerts")
		var list []alert.Alert
		if err := json.Unmarshal(m["alerts"], &list); err != nil {
			t.Fatal(err)
		}
		var out []string
		for _, a := range list {
			out = append(out, a.Rule+"/"+a.Node+"/"+fmt.Sprint(a.Seq))
		}
		return out
	}
	// Newest first: by cut, and within a cut by id (the store's key
	// order, read backwards).
	newest := func(keep func(alert.Alert) bool) []string {
		var out []string
		for _, seq := range []uint64{5, 4} {
			as := slices.Clone(stored[seq])
			slices.SortFunc(as, func(a, b alert.Alert) int { return strings.Compare(b.ID, a.ID) })
			for _, a := range as {
				if keep(a) {
					out = append(out, a.Rule+"/"+a.Node+"/"+fmt.Sprint(a.Seq))
				}
			}
		}
		return out
	}
	all := func(alert.Alert) bool { return true }
	for _, c := range []struct {
		q    string
		want []string
	}{
		{"", newest(all)},
		{"?rule=fan-out", []string{"fan-out/" + idPercent + "/5", "fan-out/" + idPercent + "/4"}},
		{"?rule=old-rule", []string{"old-rule/" + idQuery + "/5"}}, // no longer in force, still stored
		{"?rule=signature", nil}, // in force, never fired
		{"?node=" + url.QueryEscape(idSlash), []string{"ring/" + idSlash + "/4"}},
		{"?since=4", newest(func(a alert.Alert) bool { return a.Seq > 4 })},
		{"?since=2026-03-01T09:05:00Z", newest(func(a alert.Alert) bool { return a.Seq > 4 })},
		{"?limit=1", newest(all)[:1]},
	} {
		got := ids(c.q)
		if !slices.Equal(got, c.want) {
			t.Errorf("alerts%s: %v, want %v", c.q, got, c.want)
		}
	}
	if len(newest(all)) != 4 {
		t.Fatalf("stored alerts: %v", newest(all))
	}
	// The stored body is served as it was stored, with its triage (none).
	_, _, body := get(t, h, "/v1/alerts?node="+url.QueryEscape(idQuery))
	want, _ := json.Marshal(stored[5][1])
	want = append(want[:len(want)-1], `,"triage":null}`...)
	if !strings.Contains(string(body), string(want)) {
		t.Errorf("alert body %s does not hold %s", body, want)
	}
	msg := wantError(t, h, http.MethodGet, "/v1/alerts?rule=rnig", http.StatusBadRequest, `unknown rule "rnig"`)
	if !strings.Contains(msg, "fan-out, ring, signature") {
		t.Errorf("unknown rule message %q does not name the rules", msg)
	}
	for _, q := range []string{"?since=soon", "?limit=1001", "?limit=0", "?colour=red"} {
		wantError(t, h, http.MethodGet, "/v1/alerts"+q, http.StatusBadRequest, "")
	}
	// No rules in force: a rule no stored alert has is refused with that said.
	bare := New(v, Options{})
	wantError(t, bare, http.MethodGet, "/v1/alerts?rule=ring2", http.StatusBadRequest, "no alert rules are in force")
	if got := len(ids("?rule=ring")); got != 1 {
		t.Errorf("ring alerts: %d", got)
	}
}

// statusBody decodes /v1/status strictly: the top keys and each worker's.
func statusBody(t *testing.T, body []byte) (statusJSON, []map[string]json.RawMessage) {
	t.Helper()
	m := decodeStrict(t, body, "version", "shard", "shard_count", "shards")
	var raw []map[string]json.RawMessage
	if err := json.Unmarshal(m["shards"], &raw); err != nil {
		t.Fatal(err)
	}
	var st statusJSON
	if err := json.Unmarshal(body, &st); err != nil {
		t.Fatal(err)
	}
	return st, raw
}

func TestAPIStatusReadyzAndMetrics(t *testing.T) {
	v, _ := buildView(t, paymentsLog(3, 200), []uint64{100, 200}, nil)
	m := NewMetrics()
	h := New(v, Options{Metrics: m, Version: "v9.9.9-test"})
	if v.observer != shard.Observer(m) {
		t.Fatalf("New did not register its Metrics as the view's observer")
	}
	started := apiT0.Add(time.Hour)
	// Started behind the log's end (200): not ready.
	v.setStatus(shard.Status{Shard: 0, Shards: 1, AppliedSeq: 150, CutSeq: 100, CommittedSeq: 100, StreamLastSeq: 200, Lag: 50,
		Applied: 140, Rejected: map[string]uint64{"self-loop": 3}, StartedAt: started, Watermark: apiT0.Add(99 * time.Minute)})
	wantError(t, h, http.MethodGet, "/readyz", http.StatusServiceUnavailable, "not ready: applied up to 150, log at 200 (lag 50)")
	if code, _, body := get(t, h, "/healthz"); code != http.StatusOK || !strings.Contains(string(body), "alive") {
		t.Errorf("healthz %d %s", code, body)
	}
	code, _, body := get(t, h, "/v1/status")
	if code != http.StatusOK {
		t.Fatalf("status %d %s", code, body)
	}
	st, raw := statusBody(t, body)
	if st.Version != "v9.9.9-test" || st.Shard != 0 || st.ShardCount != 1 || len(raw) != 1 {
		t.Fatalf("status %s", body)
	}
	wantKeys := []string{"shard", "shard_count", "version", "applied_seq", "cut_seq", "committed_seq", "stream_last_seq", "lag", "ready",
		"applied", "expired", "rejected", "watermark", "started_at", "committed_at", "alerts_published", "commit_retries"}
	decodeStrict(t, mustJSON(t, raw[0]), wantKeys...)
	for key, val := range map[string]string{"shard": "0", "shard_count": "1", "version": `"v9.9.9-test"`, "applied_seq": "150", "cut_seq": "100",
		"committed_seq": "100", "lag": "50", "ready": "false", "rejected": `{"self-loop":3}`, "committed_at": "null",
		"started_at": `"2026-03-01T10:00:00Z"`, "watermark": `"2026-03-01T10:39:00Z"`} {
		if string(raw[0][key]) != val {
			t.Errorf("status %s = %s, want %s", key, raw[0][key], val)
		}
	}
	wantError(t, h, http.MethodGet, "/v1/status?local=maybe", http.StatusBadRequest, "local")
	wantError(t, h, http.MethodGet, "/v1/status?shard=1", http.StatusBadRequest, "shard")

	// Metrics follow the status at scrape time; the observer feeds the histograms.
	v.observer.Batch(3 * time.Millisecond)
	v.observer.Cut(40 * time.Millisecond)
	scrapeAPI := func() map[string]*expoFamily {
		code, hdr, body := get(t, h, "/metrics")
		if code != http.StatusOK || hdr.Get("Content-Type") != MetricsContentType {
			t.Fatalf("metrics: %d %q", code, hdr.Get("Content-Type"))
		}
		fams, _ := parseExposition(t, string(body))
		return fams
	}
	fams := scrapeAPI()
	val := func(name string) float64 { return fams[name].samples[0].value }
	if val("orbitwatch_ready") != 0 || val("orbitwatch_lag_events") != 50 || val("orbitwatch_cut_seq") != 100 || val("orbitwatch_committed_seq") != 100 || val("orbitwatch_events_applied_total") != 140 {
		t.Errorf("metrics before catching up: ready %v lag %v cut %v applied %v", val("orbitwatch_ready"), val("orbitwatch_lag_events"), val("orbitwatch_cut_seq"), val("orbitwatch_events_applied_total"))
	}
	if _, _, _, n := checkHistogram(t, "orbitwatch_cut_seconds", fams["orbitwatch_cut_seconds"]); n != 1 {
		t.Errorf("cut observations %v, want 1", n)
	}
	names := map[string]bool{}
	for _, n := range v.a.Names() {
		names[n] = true
	}
	for _, f := range fams {
		for _, s := range f.samples {
			for k, lv := range s.labels {
				if names[lv] || k == "node" {
					t.Errorf("metric %s has a node id label %s=%q", s.name, k, lv)
				}
			}
		}
	}

	// Caught up: readyz turns 200 and the gauges follow.
	v.setStatus(shard.Status{Shard: 0, Shards: 1, AppliedSeq: 200, CutSeq: 200, CommittedSeq: 200, StreamLastSeq: 200, Ready: true, Applied: 190,
		Rejected: map[string]uint64{"self-loop": 3}, StartedAt: started, CommittedAt: started.Add(time.Second)})
	if code, _, body := get(t, h, "/readyz"); code != http.StatusOK || !strings.Contains(string(body), `"ready":true`) {
		t.Errorf("readyz after catching up: %d %s", code, body)
	}
	fams = scrapeAPI()
	if val("orbitwatch_ready") != 1 || val("orbitwatch_lag_events") != 0 || val("orbitwatch_events_applied_total") != 190 {
		t.Errorf("metrics after catching up: ready %v lag %v applied %v", val("orbitwatch_ready"), val("orbitwatch_lag_events"), val("orbitwatch_events_applied_total"))
	}
	if l := fams["orbitwatch_events_rejected_total"].samples[0].labels; len(l) != 1 || l["reason"] != "self-loop" {
		t.Errorf("reject labels %v", l)
	}

	// Caught up, but the store refuses commits for want of space: not
	// ready, saying why without the store's paths; the retries and the
	// stall show in the status and the metrics.
	reason := "3.0 MiB free on the data directory's file system, 24.0 MiB needed to commit the cut at seq 200"
	v.setStatus(shard.Status{Shard: 0, Shards: 1, AppliedSeq: 200, CutSeq: 200, CommittedSeq: 100, StreamLastSeq: 200, Applied: 190,
		CommitRetries: 4, Stalled: reason, StartedAt: started})
	wantError(t, h, http.MethodGet, "/readyz", http.StatusServiceUnavailable, "not ready: cuts are not becoming durable: "+reason+" (applied up to 200, durable up to 100; 4 commits tried again)")
	_, _, body = get(t, h, "/v1/status")
	if _, raw = statusBody(t, body); string(raw[0]["stalled"]) != `"`+reason+`"` || string(raw[0]["commit_retries"]) != "4" {
		t.Errorf("status of a stalled worker: %s", body)
	}
	fams = scrapeAPI()
	if val("orbitwatch_commit_stalled") != 1 || val("orbitwatch_commit_retries_total") != 4 || val("orbitwatch_ready") != 0 {
		t.Errorf("metrics of a stalled worker: stalled %v retries %v ready %v", val("orbitwatch_commit_stalled"), val("orbitwatch_commit_retries_total"), val("orbitwatch_ready"))
	}
	if h := New(v, Options{}); !strings.Contains(string(func() []byte { _, _, b := get(t, h, "/v1/status"); return b }()), `"version":"`+BuildVersion()+`"`) {
		t.Errorf("default version is not BuildVersion() %q", BuildVersion())
	}
}

func mustJSON(t *testing.T, v any) []byte {
	t.Helper()
	b, err := json.Marshal(v)
	if err != nil {
		t.Fatal(err)
	}
	return b
}

// BenchmarkAPINodeRead measures one GET /v1/nodes/{id} through the
// handler: routing, a read now from the applier (in memory) or as of the
// last cut (from Badger), JSON.
func BenchmarkAPINodeRead(b *testing.B) {
	v, snaps := buildView(b, paymentsLog(4, 2000), []uint64{1000, 2000}, nil)
	h := New(v, Options{})
	var paths []string
	for node := range snaps[1].vectors {
		paths = append(paths, nodePath(node))
	}
	slices.Sort(paths)
	for _, q := range []string{"", "?seq=2000"} {
		b.Run(map[string]string{"": "now", "?seq=2000": "asof"}[q], func(b *testing.B) {
			b.ReportAllocs()
			for i := 0; b.Loop(); i++ {
				rec := httptest.NewRecorder()
				h.ServeHTTP(rec, httptest.NewRequest(http.MethodGet, paths[i%len(paths)]+q, nil))
				if rec.Code != http.StatusOK {
					b.Fatalf("%s: %d %s", paths[i%len(paths)], rec.Code, rec.Body)
				}
			}
		})
	}
}
