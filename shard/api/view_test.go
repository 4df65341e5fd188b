package api

import (
	"context"
	"encoding/json"
	"fmt"
	"math/rand/v2"
	"net/http"
	"net/http/httptest"
	"net/url"
	"slices"
	"strings"
	"sync"
	"testing"
	"time"

	"orbitwatch/delta"
	"orbitwatch/shard"
	"orbitwatch/shard/alert"
	"orbitwatch/storage"
	"orbitwatch/stream"
)

// applierView is a shard.View over a real Applier whose cuts a real Badger
// store holds, as a worker's are: reads now come from the applier at its
// last applied event, as-of reads from the store through shard.ReadStored.
// Its status is whatever the test sets. Neighbourhoods now come from the
// applier's graph as a worker's do.
type applierView struct {
	a      *shard.Applier
	st     *storage.Store
	c      *shard.Counting
	derive delta.Counter
	i, n   int

	mu       sync.Mutex
	status   shard.Status
	observer shard.Observer
}

func (v *applierView) Store() *storage.Store     { return v.st }
func (v *applierView) Counting() *shard.Counting { return v.c }
func (v *applierView) Shard() (int, int)         { return v.i, v.n }
func (v *applierView) Owner(node string) int     { return shard.OwnerOf(node, v.n) }

func (v *applierView) Status() shard.Status {
	v.mu.Lock()
	defer v.mu.Unlock()
	return v.status
}

func (v *applierView) setStatus(s shard.Status) {
	v.mu.Lock()
	defer v.mu.Unlock()
	v.status = s
}

func (v *applierView) SetObserver(o shard.Observer) {
	v.mu.Lock()
	defer v.mu.Unlock()
	v.observer = o
}

func (v *applierView) Read(ctx context.Context, req shard.ReadRequest) (shard.ReadReply, error) {
	if err := ctx.Err(); err != nil {
		return shard.ReadReply{}, err
	}
	if !req.At.IsZero() || req.Seq != 0 {
		r := shard.ReadStored(v.st, v.derive, v.c, req)
		r.Shard = v.i
		return r, nil
	}
	cat := v.c.Catalog
	r := shard.ReadReply{Status: http.StatusOK, Node: req.Node, Kind: cat.Kind.String(), MaxNodes: cat.MaxNodes, Shard: v.i}
	v.mu.Lock()
	defer v.mu.Unlock()
	x, ok := v.a.Lookup(req.Node)
	if !ok {
		r.Status, r.Error = http.StatusNotFound, fmt.Sprintf("unknown node %q at seq %d", req.Node, v.a.Seq())
		return r, nil
	}
	vec, err := v.a.Vector(x, nil)
	if err != nil {
		return r, err
	}
	r.Seq, r.EventTime, r.Orbits = v.a.Seq(), v.a.Watermark(), vec
	return r, nil
}

func (v *applierView) Neighborhood(ctx context.Context, q shard.NeighborQuery) (shard.Neighbors, error) {
	v.mu.Lock()
	defer v.mu.Unlock()
	return shard.NeighborhoodNow(ctx, v.a, q), ctx.Err()
}

// snapshot is the state at one cut (or at the end), its vectors from the
// static recount of the applier's graph there (delta/undirected, a code
// path separate from the factored records the store keeps).
type snapshot struct {
	seq       uint64
	watermark time.Time
	vectors   map[string][]uint64
}

func takeSnapshot(t testing.TB, a *shard.Applier, c *shard.Counting) snapshot {
	t.Helper()
	vec := c.Recount.Recount(a.Graph())
	s := snapshot{seq: a.Seq(), watermark: a.Watermark(), vectors: map[string][]uint64{}}
	for x, name := range a.Names() {
		row := make([]uint64, c.Catalog.NumOrbits())
		if x < vec.NumNodes() {
			copy(row, vec.Row(uint32(x)))
		}
		s.vectors[name] = row
	}
	return s
}

func undirected4(t testing.TB) *shard.Counting {
	t.Helper()
	c, err := shard.NewCounting(delta.Undirected, 4)
	if err != nil {
		t.Fatal(err)
	}
	return c
}

func openStore(t testing.TB, c *shard.Counting, dir string) *storage.Store {
	t.Helper()
	st, err := storage.Open(dir, storage.Settings{Kind: c.Catalog.Kind, MaxNodes: c.Catalog.MaxNodes, NumOrbits: c.Catalog.NumOrbits()})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { st.Close() })
	return st
}

// buildView applies events (log positions from 1) in one applier, cutting
// after each position in cuts and committing the cut to a fresh store,
// with alerts[seq] stored in the cut at seq. It returns the view (shard 0
// of 1) and the recounted state at each cut and, last, at the end.
func buildView(t testing.TB, events []stream.Event, cuts []uint64, alerts map[uint64][]alert.Alert) (*applierView, []snapshot) {
	t.Helper()
	return buildViewOf(t, undirected4(t), events, cuts, alerts)
}

// buildViewOf is buildView for the kind and size c counts.
func buildViewOf(t testing.TB, c *shard.Counting, events []stream.Event, cuts []uint64, alerts map[uint64][]alert.Alert) (*applierView, []snapshot) {
	t.Helper()
	st := openStore(t, c, t.TempDir())
	a := shard.NewApplier(c, 0, shard.Cuts{})
	a.OnCut = func(cp *storage.Checkpoint) error {
		cp.Alerts = alert.Records(alerts[cp.Seq])
		return st.Commit(cp)
	}
	var snaps []snapshot
	for k, ev := range events {
		seq := uint64(k + 1)
		if err := a.Apply(seq, ev); err != nil {
			t.Fatalf("seq %d: %v", seq, err)
		}
		if slices.Contains(cuts, seq) {
			if err := a.Cut(); err != nil {
				t.Fatal(err)
			}
			snaps = append(snaps, takeSnapshot(t, a, c))
		}
	}
	snaps = append(snaps, takeSnapshot(t, a, c))
	v := &applierView{a: a, st: st, c: c, derive: c.New(), i: 0, n: 1}
	v.setStatus(shard.Status{Shard: 0, Shards: 1, AppliedSeq: a.Seq(), CutSeq: a.LastCut(), CommittedSeq: st.Seq(), StreamLastSeq: a.Seq(), Ready: true})
	return v, snaps
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
// percent to query (cut at 4), then the triangle's edge slash–unicode
// removed, leaving a 3-star centred on percent (cut at 5), then the edge
// query–slash added and no cut after it: a tailed triangle again, the
// triangle {percent, slash, query} with the tail at unicode (seq 6, seen
// by reads now only).
func tailedTriangle() []stream.Event {
	return []stream.Event{
		pay(stream.OpAdd, idSlash, idUnicode, 0),
		pay(stream.OpAdd, idUnicode, idPercent, 1),
		pay(stream.OpAdd, idPercent, idSlash, 2),
		pay(stream.OpAdd, idPercent, idQuery, 3),
		pay(stream.OpRemove, idSlash, idUnicode, 10),
		pay(stream.OpAdd, idQuery, idSlash, 12),
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

// paymentsLog is a seeded fictional payments stream: accounts paying
// shops and each other, with refunds (removes of an edge present), one
// event a minute.
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

// request sends one request through h and returns the answer.
func request(t *testing.T, h http.Handler, method, path string) (int, http.Header, []byte) {
	t.Helper()
	rec := httptest.NewRecorder()
	h.ServeHTTP(rec, httptest.NewRequest(method, path, nil))
	return rec.Code, rec.Header(), rec.Body.Bytes()
}

func get(t *testing.T, h http.Handler, path string) (int, http.Header, []byte) {
	t.Helper()
	return request(t, h, http.MethodGet, path)
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

// wantError checks an error answer: its status, a JSON body with the one
// key error whose text contains contains, and returns the text.
func wantError(t *testing.T, h http.Handler, method, path string, code int, contains string) string {
	t.Helper()
	c, hdr, body := request(t, h, method, path)
	if c != code {
		t.Fatalf("%s %.80s: status %d, want %d (%.300s)", method, path, c, code, body)
	}
	if ct := hdr.Get("Content-Type"); ct != "application/json" {
		t.Fatalf("%s %.80s: content type %q", method, path, ct)
	}
	m := decodeStrict(t, body, "error")
	var msg string
	if err := json.Unmarshal(m["error"], &msg); err != nil || !strings.Contains(msg, contains) {
		t.Fatalf("%s %.80s: error %s, want it to mention %q", method, path, m["error"], contains)
	}
	return msg
}
