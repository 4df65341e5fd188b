package shard

import (
	"context"
	"encoding/json"
	"fmt"
	"io"
	"math/rand/v2"
	"net/http"
	"net/http/httptest"
	"net/url"
	"reflect"
	"slices"
	"strings"
	"sync"
	"testing"
	"time"

	"orbitwatch/delta"
	"orbitwatch/storage"
	"orbitwatch/stream"
)

// storeView is a View over a real Badger store filled by a real Applier:
// each shard's store holds every vector (the test applies the whole log to
// each), and a read of a node another shard owns is handed to that shard's
// storeView, as a worker hands it over NATS.
type storeView struct {
	st     *storage.Store
	c      *Counting
	i, n   int
	shards []*storeView // every shard, this one included

	mu       sync.Mutex
	status   Status
	observer Observer
	served   int // reads answered from this store
}

func (v *storeView) Store() *storage.Store { return v.st }
func (v *storeView) Counting() *Counting   { return v.c }
func (v *storeView) Shard() (int, int)     { return v.i, v.n }
func (v *storeView) Owner(node string) int { return OwnerOf(node, v.n) }

func (v *storeView) Status() Status {
	v.mu.Lock()
	defer v.mu.Unlock()
	return v.status
}

func (v *storeView) SetObserver(o Observer) {
	v.mu.Lock()
	defer v.mu.Unlock()
	v.observer = o
}

func (v *storeView) Read(ctx context.Context, req ReadRequest) (ReadReply, error) {
	owner := v.shards[v.Owner(req.Node)]
	if err := ctx.Err(); err != nil {
		return ReadReply{}, err
	}
	owner.mu.Lock()
	owner.served++
	owner.mu.Unlock()
	cat := v.c.Catalog
	return readStore(owner.st, cat.Kind.String(), cat.MaxNodes, owner.i, req.Node, req.At, ^uint64(0)), nil
}

// snapshot is the applier's state at one committed checkpoint.
type snapshot struct {
	seq       uint64
	watermark time.Time
	vectors   map[string][]uint64
}

// buildShards applies events (one per log position from 1) and commits a
// checkpoint to every shard's store at each position in cuts, returning
// the views and the applier's vectors at each checkpoint.
func buildShards(t testing.TB, n int, events []stream.Event, cuts []uint64) ([]*storeView, []snapshot) {
	t.Helper()
	c, err := NewCounting(delta.Undirected, 4)
	if err != nil {
		t.Fatal(err)
	}
	views := make([]*storeView, n)
	appliers := make([]*Applier, n)
	for i := range views {
		st, err := storage.Open(t.TempDir(), storage.Settings{Kind: c.Catalog.Kind, MaxNodes: c.Catalog.MaxNodes, NumOrbits: c.Catalog.NumOrbits()})
		if err != nil {
			t.Fatal(err)
		}
		t.Cleanup(func() { st.Close() })
		views[i] = &storeView{st: st, c: c, i: i, n: n, shards: views}
		appliers[i] = NewApplier(c, 0)
	}
	var snaps []snapshot
	for k, ev := range events {
		seq := uint64(k + 1)
		for _, a := range appliers {
			if err := a.Apply(seq, ev); err != nil {
				t.Fatalf("seq %d: %v", seq, err)
			}
		}
		if !slices.Contains(cuts, seq) {
			continue
		}
		for i, a := range appliers {
			if err := views[i].st.Commit(a.Checkpoint(nil)); err != nil {
				t.Fatalf("commit at %d: %v", seq, err)
			}
			a.ResetTouched()
		}
		a := appliers[0]
		s := snapshot{seq: seq, watermark: a.Watermark(), vectors: map[string][]uint64{}}
		for x, name := range a.Names() {
			s.vectors[name] = slices.Clone(a.Vectors().Row(uint32(x)))
		}
		snaps = append(snaps, s)
	}
	return views, snaps
}

// Node ids that need escaping in a URL path or query, or are not ASCII.
const (
	idSlash   = "shop/north 1"
	idUnicode = "café ☕"
	idPercent = "100% cotton"
	idQuery   = "x?y#z&seq=1"
)

var apiT0 = time.Date(2026, 3, 1, 9, 0, 0, 0, time.UTC)

func pay(op stream.Op, src, dst string, minute int) stream.Event {
	return stream.Event{Op: op, Src: src, Dst: dst, TS: apiT0.Add(time.Duration(minute) * time.Minute), HasTS: true}
}

// tailedTriangle is a triangle {slash, unicode, percent} with a tail from
// percent to query (checkpoint at 4), then the triangle's edge
// slash–unicode removed, leaving a 3-star centred on percent (checkpoint
// at 5).
func tailedTriangle() []stream.Event {
	return []stream.Event{
		pay(stream.OpAdd, idSlash, idUnicode, 0),
		pay(stream.OpAdd, idUnicode, idPercent, 1),
		pay(stream.OpAdd, idPercent, idSlash, 2),
		pay(stream.OpAdd, idPercent, idQuery, 3),
		pay(stream.OpRemove, idSlash, idUnicode, 10),
	}
}

// orbits returns a 15-orbit vector with the given (orbit, count) pairs.
func orbits(pairs ...uint64) []uint64 {
	v := make([]uint64, 15)
	for i := 0; i < len(pairs); i += 2 {
		v[pairs[i]] = pairs[i+1]
	}
	return v
}

func get(t *testing.T, h http.Handler, path string) (int, http.Header, []byte) {
	t.Helper()
	rec := httptest.NewRecorder()
	h.ServeHTTP(rec, httptest.NewRequest(http.MethodGet, path, nil))
	return rec.Code, rec.Header(), rec.Body.Bytes()
}

func nodePath(id string) string { return "/v1/nodes/" + url.PathEscape(id) }

// decodeStrict decodes body into a map and checks it has exactly keys.
func decodeStrict(t *testing.T, body []byte, keys ...string) map[string]json.RawMessage {
	t.Helper()
	var m map[string]json.RawMessage
	if err := json.Unmarshal(body, &m); err != nil {
		t.Fatalf("body %q: %v", body, err)
	}
	have := slices.Sorted(func(yield func(string) bool) {
		for k := range m {
			if !yield(k) {
				return
			}
		}
	})
	want := slices.Sorted(slices.Values(keys))
	if !slices.Equal(have, want) {
		t.Fatalf("body %s has keys %v, want %v", body, have, want)
	}
	return m
}

func readNode(t *testing.T, h http.Handler, path string) NodeVector {
	t.Helper()
	code, hdr, body := get(t, h, path)
	if code != http.StatusOK {
		t.Fatalf("GET %s: %d %s", path, code, body)
	}
	if ct := hdr.Get("Content-Type"); ct != "application/json" {
		t.Fatalf("GET %s: content type %q", path, ct)
	}
	decodeStrict(t, body, "node", "kind", "max_nodes", "seq", "event_time", "orbits")
	var b NodeVector
	if err := json.Unmarshal(body, &b); err != nil {
		t.Fatal(err)
	}
	return b
}

func wantError(t *testing.T, h http.Handler, path string, code int, contains string) {
	t.Helper()
	c, hdr, body := get(t, h, path)
	if c != code {
		t.Fatalf("GET %s: status %d, want %d (%s)", path, c, code, body)
	}
	if ct := hdr.Get("Content-Type"); ct != "application/json" {
		t.Fatalf("GET %s: content type %q", path, ct)
	}
	m := decodeStrict(t, body, "error")
	var msg string
	if err := json.Unmarshal(m["error"], &msg); err != nil || !strings.Contains(msg, contains) {
		t.Fatalf("GET %s: error %s, want it to mention %q", path, m["error"], contains)
	}
}

func TestAPINodeReadsHandChecked(t *testing.T) {
	views, _ := buildShards(t, 1, tailedTriangle(), []uint64{4, 5})
	h := NewAPI(views[0], APIOptions{})
	// Orbit vectors counted by hand from the Pržulj 2007 numbering (DESIGN.md
	// §6): in the tailed triangle the tail end is orbit 9, the two degree-2
	// nodes orbit 10 and the degree-3 node orbit 11; in the 3-star the
	// leaves are orbit 6 and the centre orbit 7. Orbit 0 is the degree,
	// 1/2 end/middle of induced 3-paths, 3 the triangle.
	tailed := map[string][]uint64{
		idSlash:   orbits(0, 2, 1, 1, 3, 1, 10, 1),
		idUnicode: orbits(0, 2, 1, 1, 3, 1, 10, 1),
		idPercent: orbits(0, 3, 2, 2, 3, 1, 11, 1),
		idQuery:   orbits(0, 1, 1, 2, 9, 1),
	}
	star := map[string][]uint64{
		idSlash:   orbits(0, 1, 1, 2, 6, 1),
		idUnicode: orbits(0, 1, 1, 2, 6, 1),
		idPercent: orbits(0, 3, 2, 3, 7, 1),
		idQuery:   orbits(0, 1, 1, 2, 6, 1),
	}
	cases := []struct {
		query string
		seq   uint64
		wm    time.Time
		want  map[string][]uint64
	}{
		{"", 5, apiT0.Add(10 * time.Minute), star},
		{"?seq=5", 5, apiT0.Add(10 * time.Minute), star},
		{"?seq=1000", 5, apiT0.Add(10 * time.Minute), star},
		{"?seq=4", 4, apiT0.Add(3 * time.Minute), tailed},
		// as of an event time: the latest cut whose watermark is ≤ it.
		{"?at=" + url.QueryEscape(apiT0.Add(3*time.Minute).Format(time.RFC3339)), 4, apiT0.Add(3 * time.Minute), tailed},
		{"?at=" + url.QueryEscape(apiT0.Add(9*time.Minute+59*time.Second).Format(time.RFC3339)), 4, apiT0.Add(3 * time.Minute), tailed},
		{"?at=" + fmt.Sprint(apiT0.Add(10*time.Minute).Unix()), 5, apiT0.Add(10 * time.Minute), star},
		{"?at=2030-01-01T00:00:00%2B02:00", 5, apiT0.Add(10 * time.Minute), star},
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
	wantError(t, h, nodePath("nobody"), http.StatusNotFound, "unknown node")
	wantError(t, h, nodePath(idQuery)+"?seq=3", http.StatusNotFound, "no complete cut")
	wantError(t, h, nodePath(idQuery)+"?at=2026-03-01T08:59:00Z", http.StatusNotFound, "no complete cut")
	wantError(t, h, nodePath(idQuery)+"?at=yesterday", http.StatusBadRequest, "yesterday")
	wantError(t, h, nodePath(idQuery)+"?seq=-1", http.StatusBadRequest, "seq")
	wantError(t, h, nodePath(idQuery)+"?seq=4&at=2026-03-01T09:00:00Z", http.StatusBadRequest, "not both")
	wantError(t, h, nodePath(idQuery)+"?as_of=4", http.StatusBadRequest, "as_of")
	wantError(t, h, "/v1/nodes/", http.StatusNotFound, "")
	wantError(t, h, "/v2/everything", http.StatusNotFound, "/v2/everything")

	rec := httptest.NewRecorder()
	h.ServeHTTP(rec, httptest.NewRequest(http.MethodPost, nodePath(idQuery), nil))
	if rec.Code != http.StatusMethodNotAllowed || rec.Header().Get("Allow") == "" {
		t.Errorf("POST: %d, Allow %q", rec.Code, rec.Header().Get("Allow"))
	}
}

func TestAPIEventTimeNullWithoutTimes(t *testing.T) {
	events := []stream.Event{{Op: stream.OpAdd, Src: "p", Dst: "q"}, {Op: stream.OpAdd, Src: "q", Dst: "r"}}
	views, _ := buildShards(t, 1, events, []uint64{2})
	h := NewAPI(views[0], APIOptions{})
	_, _, body := get(t, h, nodePath("q"))
	m := decodeStrict(t, body, "node", "kind", "max_nodes", "seq", "event_time", "orbits")
	if string(m["event_time"]) != "null" {
		t.Errorf("event_time %s, want null", m["event_time"])
	}
	// q is the middle of the 3-path p–q–r: degree 2, orbit 2 once.
	if string(m["orbits"]) != "[2,0,1,0,0,0,0,0,0,0,0,0,0,0,0]" {
		t.Errorf("orbits %s", m["orbits"])
	}
}

// paymentsLog is a seeded fictional payments stream: accounts paying
// shops and each other, with refunds (removes of an edge present).
func paymentsLog(seed uint64, n int) []stream.Event {
	r := rand.New(rand.NewPCG(seed, 7))
	var out []stream.Event
	live := map[[2]string]int{}
	var keys [][2]string
	for len(out) < n {
		k := len(out)
		if len(keys) > 0 && r.IntN(5) == 0 {
			e := keys[r.IntN(len(keys))]
			if live[e] > 0 {
				live[e]--
				out = append(out, pay(stream.OpRemove, e[0], e[1], k))
				continue
			}
		}
		src := fmt.Sprintf("acct-%03d", r.IntN(40))
		dst := fmt.Sprintf("shop-%02d", r.IntN(8))
		if r.IntN(3) == 0 {
			dst = fmt.Sprintf("acct-%03d", r.IntN(40))
		}
		if src == dst {
			continue
		}
		e := [2]string{src, dst}
		if live[e] == 0 {
			keys = append(keys, e)
		}
		live[e]++
		out = append(out, pay(stream.OpAdd, src, dst, k))
	}
	return out
}

func TestAPIForwardsToOwnerAndReadsAsOf(t *testing.T) {
	events := paymentsLog(1, 600)
	cuts := []uint64{100, 250, 400, 600}
	views, snaps := buildShards(t, 3, events, cuts)
	handlers := make([]http.Handler, len(views))
	for i, v := range views {
		handlers[i] = NewAPI(v, APIOptions{})
	}
	last := snaps[len(snaps)-1]
	owned := make([]int, 3)
	for node := range last.vectors {
		owned[OwnerOf(node, 3)]++
	}
	for i, n := range owned {
		if n == 0 {
			t.Fatalf("shard %d owns no node of the test log; pick another seed", i)
		}
	}
	// Every worker answers for every node at every cut, from the owner's store.
	for _, s := range snaps {
		at := url.QueryEscape(s.watermark.Format(time.RFC3339Nano))
		for node, want := range s.vectors {
			for i, h := range handlers {
				path := nodePath(node) + "?at=" + at
				code, hdr, body := get(t, h, path)
				if code != http.StatusOK {
					t.Fatalf("shard %d GET %s: %d %s", i, path, code, body)
				}
				if hdr.Get(ShardHeader) != fmt.Sprint(OwnerOf(node, 3)) {
					t.Fatalf("shard %d GET %s answered by shard %s, want owner %d", i, path, hdr.Get(ShardHeader), OwnerOf(node, 3))
				}
				var b NodeVector
				if err := json.Unmarshal(body, &b); err != nil {
					t.Fatal(err)
				}
				if b.Seq != s.seq || !slices.Equal(b.Orbits, want) {
					t.Fatalf("shard %d GET %s: seq %d orbits %v, want seq %d %v (applier at that checkpoint)", i, path, b.Seq, b.Orbits, s.seq, want)
				}
			}
		}
	}
	for i, v := range views {
		if v.served == 0 {
			t.Errorf("shard %d answered no read", i)
		}
	}
	// A node first seen after the first cut is unknown as of it, on any shard.
	for node := range last.vectors {
		if _, ok := snaps[0].vectors[node]; ok {
			continue
		}
		at := url.QueryEscape(snaps[0].watermark.Format(time.RFC3339Nano))
		for _, h := range handlers {
			wantError(t, h, nodePath(node)+"?at="+at, http.StatusNotFound, "unknown node")
		}
		break
	}
}

func TestAPISeqReadsForwardOverHTTP(t *testing.T) {
	events := paymentsLog(2, 298)
	events = append(events, pay(stream.OpAdd, ".", "..", 298), pay(stream.OpAdd, "..", "acct-001", 299))
	views, snaps := buildShards(t, 2, events, []uint64{150, 300})
	servers := make([]*httptest.Server, 2)
	peers := make([]string, 2)
	handlers := make([]http.Handler, 2)
	var late [2]http.Handler
	for i := range servers {
		i := i
		servers[i] = httptest.NewServer(http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) { late[i].ServeHTTP(w, r) }))
		t.Cleanup(servers[i].Close)
		peers[i] = servers[i].URL
	}
	for i, v := range views {
		handlers[i] = NewAPI(v, APIOptions{Peers: peers})
		late[i] = handlers[i]
	}
	for node, want := range snaps[0].vectors {
		owner := OwnerOf(node, 2)
		for i := range servers {
			resp, err := http.Get(servers[i].URL + nodePath(node) + "?seq=200")
			if err != nil {
				t.Fatal(err)
			}
			body, _ := io.ReadAll(resp.Body)
			resp.Body.Close()
			if resp.StatusCode != http.StatusOK || resp.Header.Get(ShardHeader) != fmt.Sprint(owner) {
				t.Fatalf("shard %d %q?seq=200: %d from shard %s: %s", i, node, resp.StatusCode, resp.Header.Get(ShardHeader), body)
			}
			var b NodeVector
			if err := json.Unmarshal(body, &b); err != nil {
				t.Fatal(err)
			}
			if b.Seq != 150 || !slices.Equal(b.Orbits, want) {
				t.Fatalf("shard %d %q?seq=200: seq %d %v, want 150 %v", i, node, b.Seq, b.Orbits, want)
			}
		}
	}
	// The ids "." and ".." survive the router and the forwarding when
	// escaped: of the two servers asked, one owns the node and one forwards.
	for _, id := range []string{".", ".."} {
		for i := range servers {
			resp, err := http.Get(servers[i].URL + "/v1/nodes/" + escapeID(id) + "?seq=300")
			if err != nil {
				t.Fatal(err)
			}
			body, _ := io.ReadAll(resp.Body)
			resp.Body.Close()
			var b NodeVector
			if resp.StatusCode != http.StatusOK || json.Unmarshal(body, &b) != nil || b.Node != id || !slices.Equal(b.Orbits, snaps[1].vectors[id]) {
				t.Errorf("shard %d, id %q: %d %s, want %v", i, id, resp.StatusCode, body, snaps[1].vectors[id])
			}
		}
	}
	// Without peer addresses a seq read of another shard's node is refused.
	h := NewAPI(views[0], APIOptions{})
	for node := range snaps[0].vectors {
		if OwnerOf(node, 2) == 1 {
			wantError(t, h, nodePath(node)+"?seq=150", http.StatusNotImplemented, "shard 1")
			break
		}
	}
}

func TestAPIStatusReadyzAndMetrics(t *testing.T) {
	events := paymentsLog(3, 200)
	views, _ := buildShards(t, 2, events, []uint64{100, 200})
	srv := make([]*httptest.Server, 2)
	var hs [2]http.Handler
	peers := make([]string, 3)
	for i := range srv {
		i := i
		srv[i] = httptest.NewServer(http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) { hs[i].ServeHTTP(w, r) }))
		t.Cleanup(srv[i].Close)
		peers[i] = srv[i].URL
	}
	// A third peer that does not answer.
	dead := httptest.NewServer(http.NotFoundHandler())
	peers[2] = dead.URL
	dead.Close()
	m := NewMetrics()
	for i, v := range views {
		opts := APIOptions{Peers: peers, Timeout: 2 * time.Second}
		if i == 0 {
			opts.Metrics = m
		}
		hs[i] = NewAPI(v, opts)
	}
	if views[0].observer != Observer(m) {
		t.Fatalf("NewAPI did not register its Metrics as the view's observer")
	}
	set := func(v *storeView, s Status) {
		v.mu.Lock()
		v.status = s
		v.mu.Unlock()
	}
	started := apiT0.Add(time.Hour)
	// Started behind the log's end (200): not ready at the first cut.
	set(views[0], Status{Shard: 0, Shards: 2, AppliedSeq: 150, CutSeq: 100, StreamLastSeq: 200, Lag: 100, Applied: 140, Rejected: map[string]uint64{"self-loop": 3}, StartedAt: started})
	set(views[1], Status{Shard: 1, Shards: 2, AppliedSeq: 200, CutSeq: 200, StreamLastSeq: 200, Ready: true, StartedAt: started})
	wantError(t, hs[0], "/readyz", http.StatusServiceUnavailable, "not ready")
	if code, _, body := get(t, hs[1], "/readyz"); code != http.StatusOK {
		t.Errorf("shard 1 readyz %d %s", code, body)
	}
	for i := range hs {
		code, _, body := get(t, hs[i], "/healthz")
		if code != http.StatusOK {
			t.Errorf("healthz %d %s", code, body)
		}
	}

	code, _, body := get(t, hs[0], "/v1/status")
	if code != http.StatusOK {
		t.Fatalf("status %d %s", code, body)
	}
	var st struct {
		Shard  int
		Shards []map[string]json.RawMessage
	}
	if err := json.Unmarshal(body, &st); err != nil {
		t.Fatal(err)
	}
	if st.Shard != 0 || len(st.Shards) != 3 {
		t.Fatalf("status %s: want shard 0 and three entries", body)
	}
	wantLine := func(e map[string]json.RawMessage, key, val string) {
		t.Helper()
		if string(e[key]) != val {
			t.Errorf("status entry %v: %s = %s, want %s", e, key, e[key], val)
		}
	}
	wantLine(st.Shards[0], "shard", "0")
	wantLine(st.Shards[0], "cut_seq", "100")
	wantLine(st.Shards[0], "applied_seq", "150")
	wantLine(st.Shards[0], "lag", "100")
	wantLine(st.Shards[0], "ready", "false")
	wantLine(st.Shards[0], "rejected", `{"self-loop":3}`)
	wantLine(st.Shards[0], "cut_at", "null")
	wantLine(st.Shards[0], "started_at", `"2026-03-01T10:00:00Z"`)
	wantLine(st.Shards[1], "shard", "1")
	wantLine(st.Shards[1], "cut_seq", "200")
	wantLine(st.Shards[1], "ready", "true")
	wantLine(st.Shards[2], "shard", "2")
	if !strings.Contains(string(st.Shards[2]["error"]), "peer") {
		t.Errorf("unreachable peer entry %v has no error", st.Shards[2])
	}
	if code, _, body := get(t, hs[0], "/v1/status?local=true"); code != http.StatusOK || strings.Count(string(body), `"shard":`) != 2 {
		t.Errorf("local status %d %s: want this shard only", code, body)
	}

	// Metrics follow the status at scrape time; the observer feeds the histograms.
	views[0].observer.Batch(3 * time.Millisecond)
	views[0].observer.Cut(40 * time.Millisecond)
	scrapeAPI := func() map[string]*expoFamily {
		rec := httptest.NewRecorder()
		hs[0].ServeHTTP(rec, httptest.NewRequest(http.MethodGet, "/metrics", nil))
		if rec.Code != http.StatusOK || rec.Header().Get("Content-Type") != MetricsContentType {
			t.Fatalf("metrics: %d %q", rec.Code, rec.Header().Get("Content-Type"))
		}
		fams, _ := parseExposition(t, rec.Body.String())
		return fams
	}
	fams := scrapeAPI()
	val := func(fams map[string]*expoFamily, name string) float64 { return fams[name].samples[0].value }
	if val(fams, "orbitwatch_ready") != 0 || val(fams, "orbitwatch_lag_events") != 100 || val(fams, "orbitwatch_cut_seq") != 100 || val(fams, "orbitwatch_events_applied_total") != 140 {
		t.Errorf("metrics before catching up: ready %v lag %v cut %v applied %v", val(fams, "orbitwatch_ready"), val(fams, "orbitwatch_lag_events"), val(fams, "orbitwatch_cut_seq"), val(fams, "orbitwatch_events_applied_total"))
	}
	if _, _, _, n := checkHistogram(t, "orbitwatch_cut_seconds", fams["orbitwatch_cut_seconds"]); n != 1 {
		t.Errorf("cut observations %v, want 1", n)
	}
	for _, f := range fams {
		for _, s := range f.samples {
			for k, v := range s.labels {
				if _, _, _, err := views[0].st.VectorAt(v, ^uint64(0)); err == nil || k == "node" {
					t.Errorf("metric %s has a node id label %s=%q", s.name, k, v)
				}
			}
		}
	}

	// Caught up: readyz turns 200 and the gauges follow.
	set(views[0], Status{Shard: 0, Shards: 2, AppliedSeq: 200, CutSeq: 200, StreamLastSeq: 200, Ready: true, Applied: 190, Rejected: map[string]uint64{"self-loop": 3}, StartedAt: started, CutAt: started.Add(time.Second)})
	if code, _, body := get(t, hs[0], "/readyz"); code != http.StatusOK || !strings.Contains(string(body), `"ready":true`) {
		t.Errorf("readyz after catching up: %d %s", code, body)
	}
	fams = scrapeAPI()
	if val(fams, "orbitwatch_ready") != 1 || val(fams, "orbitwatch_lag_events") != 0 || val(fams, "orbitwatch_events_applied_total") != 190 {
		t.Errorf("metrics after catching up: ready %v lag %v applied %v", val(fams, "orbitwatch_ready"), val(fams, "orbitwatch_lag_events"), val(fams, "orbitwatch_events_applied_total"))
	}
	if !reflect.DeepEqual(fams["orbitwatch_events_rejected_total"].samples[0].labels, map[string]string{"reason": "self-loop"}) {
		t.Errorf("reject labels %v", fams["orbitwatch_events_rejected_total"].samples[0].labels)
	}
}

// BenchmarkAPINodeRead measures one GET /v1/nodes/{id} of a locally owned
// node through the handler (routing, a Badger read at the last cut, JSON).
func BenchmarkAPINodeRead(b *testing.B) {
	views, snaps := buildShards(b, 1, paymentsLog(4, 2000), []uint64{1000, 2000})
	h := NewAPI(views[0], APIOptions{})
	var paths []string
	for node := range snaps[1].vectors {
		paths = append(paths, nodePath(node))
	}
	slices.Sort(paths)
	b.ReportAllocs()
	for i := 0; b.Loop(); i++ {
		rec := httptest.NewRecorder()
		h.ServeHTTP(rec, httptest.NewRequest(http.MethodGet, paths[i%len(paths)], nil))
		if rec.Code != http.StatusOK {
			b.Fatalf("%s: %d %s", paths[i%len(paths)], rec.Code, rec.Body)
		}
	}
}
