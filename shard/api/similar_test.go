package api

import (
	"context"
	"encoding/json"
	"fmt"
	"math/rand/v2"
	"net/http"
	"net/url"
	"slices"
	"testing"
	"time"

	"orbitwatch/bench/gen"
	"orbitwatch/delta/gdv"
	"orbitwatch/shard"
	"orbitwatch/storage"
	"orbitwatch/stream"
)

// similarView is an applierView that answers similarity queries as a
// worker does: now from live signatures kept by the applier's cuts, as of
// a cut from the store.
type similarView struct {
	*applierView
	live   *shard.LiveSignatures
	stored *shard.StoredSignatures
}

func newSimilarView(v *applierView) *similarView {
	sv := &similarView{applierView: v, live: shard.NewLiveSignatures(v.c)}
	sv.stored = shard.NewStoredSignatures(v.st, v.c, sv.live.Metric())
	commit := v.a.OnCut
	v.a.OnCut = func(cp *storage.Checkpoint) error {
		sv.live.Cut(cp)
		return commit(cp)
	}
	return sv
}

func (v *similarView) Similar(ctx context.Context, req shard.SimilarRequest) (shard.SimilarReply, error) {
	if req.At.IsZero() && req.Seq == 0 {
		return v.live.Similar(v.a, &v.mu, req), ctx.Err()
	}
	return v.stored.Similar(req), ctx.Err()
}

// twinsLog is a sparse random background of bg accounts, then two copies of
// one connected component of size accounts ("twin-a-i" and, relabelled,
// "twin-b-j"), an event a minute from apiT0; it returns the log and each
// a-node's image.
func twinsLog(seed uint64, bg, size int) ([]stream.Event, map[string]string) {
	r := rand.New(rand.NewPCG(seed, 1))
	var out []stream.Event
	seen := map[[2]int]bool{}
	for len(out) < 2*bg {
		u, v := r.IntN(bg), r.IntN(bg)
		if u == v || seen[[2]int{min(u, v), max(u, v)}] {
			continue
		}
		seen[[2]int{min(u, v), max(u, v)}] = true
		out = append(out, pay(stream.OpAdd, fmt.Sprintf("bg-%d", u), fmt.Sprintf("bg-%d", v), len(out)))
	}
	edges, perm := gen.Twin(r, size)
	image := map[string]string{}
	a := func(i int) string { return fmt.Sprintf("twin-a-%d", i) }
	b := func(i int) string { return fmt.Sprintf("twin-b-%d", perm[i]) }
	for i := range size {
		image[a(i)] = b(i)
	}
	for _, e := range edges {
		out = append(out, pay(stream.OpAdd, a(e[0]), a(e[1]), len(out)))
		out = append(out, pay(stream.OpAdd, b(e[1]), b(e[0]), len(out)))
	}
	return out, image
}

func readSimilar(t *testing.T, h http.Handler, path string) SimilarJSON {
	t.Helper()
	code, _, body := get(t, h, path)
	if code != http.StatusOK {
		t.Fatalf("GET %s: %d %s", path, code, body)
	}
	m := decodeStrict(t, body, "node", "seq", "event_time", "similar")
	var items []json.RawMessage
	if err := json.Unmarshal(m["similar"], &items); err != nil {
		t.Fatal(err)
	}
	for _, it := range items {
		decodeStrict(t, it, "node", "distance", "degree", "orbits")
	}
	var out SimilarJSON
	if err := json.Unmarshal(body, &out); err != nil {
		t.Fatal(err)
	}
	return out
}

// nearestFromVectors is the answer computed from a snapshot's recounted
// vectors (the static recount, not the records) with a fresh gdv.Index
// over them, ids in the order of names.
func nearestFromVectors(t *testing.T, s snapshot, names []string, node string, k int) []SimilarNodeJSON {
	t.Helper()
	cat := undirected4(t).Catalog
	ix := gdv.NewIndex(gdv.ForCatalog(cat))
	at := -1
	for x, n := range names {
		if v, ok := s.vectors[n]; ok {
			ix.Set(uint32(x), v)
		}
		if n == node {
			at = x
		}
	}
	deg := func(y uint32) int { return int(s.vectors[names[y]][0]) }
	got := ix.Nearest(s.vectors[node], k, func(y uint32) bool { return int(y) != at && deg(y) >= 1 })
	out := []SimilarNodeJSON{}
	for _, n := range got {
		terms, _ := ix.Terms(nil, s.vectors[node], n.Node)
		j := SimilarNodeJSON{Node: names[n.Node], Distance: n.Distance, Degree: deg(n.Node), Orbits: []OrbitName{}}
		for _, o := range gdv.Largest(terms, shard.SimilarOrbits) {
			j.Orbits = append(j.Orbits, OrbitName{Orbit: o, Name: cat.Orbits[o].Name, Graphlet: cat.Graphlets[cat.Orbits[o].Graphlet].Name})
		}
		out = append(out, j)
	}
	return out
}

func sameSimilarJSON(a, b []SimilarNodeJSON) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i].Node != b[i].Node || a[i].Distance != b[i].Distance || a[i].Degree != b[i].Degree || !slices.Equal(a[i].Orbits, b[i].Orbits) {
			return false
		}
	}
	return true
}

// TestAPISimilarPlantedTwins: two isomorphic components planted in a
// random background: through the API every node of one has its image in
// the other as its nearest signature at distance 0, now and as of the
// cut; the answers equal a fresh index over recounted vectors; a cut
// before the twins knows none of them.
func TestAPISimilarPlantedTwins(t *testing.T) {
	log, image := twinsLog(5, 200, 9)
	bgEnd := uint64(400)
	v, snaps := buildView(t, log, []uint64{bgEnd, uint64(len(log))}, nil)
	sv := newSimilarView(v)
	h := New(sv, Options{})
	names := v.a.Names()
	final := snaps[len(snaps)-1]
	for a, b := range image {
		// Precondition of the seed: only the image shares a's vector.
		for n, vec := range final.vectors {
			if n != a && n != b && slices.Equal(vec, final.vectors[a]) {
				t.Fatalf("%s shares the vector of %s besides its image %s: choose another seed", n, a, b)
			}
		}
		for _, q := range []string{"", "?seq=" + fmt.Sprint(len(log)), "?at=" + url.QueryEscape(log[len(log)-1].TS.Format(time.RFC3339))} {
			path := nodePath(a) + "/similar" + q
			if q == "" {
				path += "?k=4"
			} else {
				path += "&k=4"
			}
			got := readSimilar(t, h, path)
			if got.Node != a || got.Seq != uint64(len(log)) || len(got.Similar) != 4 {
				t.Fatalf("GET %s: node %q seq %d, %d similar", path, got.Node, got.Seq, len(got.Similar))
			}
			if s := got.Similar[0]; s.Node != b || s.Distance != 0 || len(s.Orbits) != 0 || !(got.Similar[1].Distance > 0) {
				t.Fatalf("GET %s: nearest %+v, then %+v; want %s at 0 with no differing orbit, then one above 0", path, s, got.Similar[1], b)
			}
			if want := nearestFromVectors(t, final, names, a, 4); !sameSimilarJSON(got.Similar, want) {
				t.Fatalf("GET %s: %+v\nfrom the recount: %+v", path, got.Similar, want)
			}
		}
	}
	// As of the cut before the twins: the background alone.
	bg := snaps[0]
	for _, q := range []string{"bg-0", "bg-17"} {
		got := readSimilar(t, h, nodePath(q)+"/similar?k=7&seq="+fmt.Sprint(bgEnd))
		if want := nearestFromVectors(t, bg, names[:len(bg.vectors)], q, 7); got.Seq != bgEnd || !sameSimilarJSON(got.Similar, want) {
			t.Fatalf("%s as of %d: seq %d %+v\nfrom the recount: %+v", q, bgEnd, got.Seq, got.Similar, want)
		}
	}
	get := http.MethodGet
	wantError(t, h, get, nodePath("twin-a-0")+"/similar?seq="+fmt.Sprint(bgEnd), http.StatusNotFound, "unknown node")
	wantError(t, h, get, nodePath("nobody")+"/similar", http.StatusNotFound, `unknown node "nobody"`)
	wantError(t, h, get, nodePath("bg-0")+"/similar?seq=3", http.StatusNotFound, "no complete cut")
	wantError(t, h, get, nodePath("bg-0")+"/similar?at=2026-03-01T08:00:00Z", http.StatusNotFound, "no complete cut")
	wantError(t, h, get, nodePath("bg-0")+"/similar?k=0", http.StatusBadRequest, "k")
	wantError(t, h, get, nodePath("bg-0")+"/similar?k=1001", http.StatusBadRequest, "1..1000")
	wantError(t, h, get, nodePath("bg-0")+"/similar?min_degree=-1", http.StatusBadRequest, "min_degree")
	wantError(t, h, get, nodePath("bg-0")+"/similar?seq=4&at=2026-03-01T09:00:00Z", http.StatusBadRequest, "not both")
	wantError(t, h, get, nodePath("bg-0")+"/similar?near=1", http.StatusBadRequest, "near")
	wantError(t, h, http.MethodPost, nodePath("bg-0")+"/similar", http.StatusMethodNotAllowed, "use GET")
	wantError(t, New(v, Options{}), get, nodePath("bg-0")+"/similar", http.StatusNotImplemented, "similarity")
}

// TestAPISimilarFollowsChanges: answers now follow the applier past the
// last cut (the live index refreshed for the changed pairs), and
// min_degree leaves out nodes with fewer neighbours.
func TestAPISimilarFollowsChanges(t *testing.T) {
	log := paymentsLog(9, 600)
	v, _ := buildView(t, log[:400], []uint64{200, 400}, nil)
	sv := newSimilarView(v)
	h := New(sv, Options{})
	for i, e := range log[400:] {
		if i%50 == 0 {
			for _, q := range []string{"acct-001", "shop-03"} {
				snap := takeSnapshot(t, v.a, v.c)
				got := readSimilar(t, h, nodePath(q)+"/similar?k=6")
				if want := nearestFromVectors(t, snap, v.a.Names(), q, 6); got.Seq != v.a.Seq() || !sameSimilarJSON(got.Similar, want) {
					t.Fatalf("%s at %d: seq %d %+v\nfrom the recount: %+v", q, v.a.Seq(), got.Seq, got.Similar, want)
				}
			}
		}
		v.mu.Lock()
		err := v.a.Apply(uint64(401+i), e)
		v.mu.Unlock()
		if err != nil {
			t.Fatal(err)
		}
		if i == 120 {
			v.mu.Lock()
			err := v.a.Cut()
			v.mu.Unlock()
			if err != nil {
				t.Fatal(err)
			}
		}
	}
	got := readSimilar(t, h, nodePath("acct-001")+"/similar?k=1000&min_degree=4")
	for _, s := range got.Similar {
		if s.Degree < 4 {
			t.Errorf("min_degree=4 gave %s of degree %d", s.Node, s.Degree)
		}
	}
	all := readSimilar(t, h, nodePath("acct-001")+"/similar?k=1000&min_degree=0")
	if len(all.Similar) != len(v.a.Names())-1 || len(got.Similar) >= len(all.Similar) {
		t.Errorf("min_degree=0 gave %d of %d other nodes, min_degree=4 %d", len(all.Similar), len(v.a.Names())-1, len(got.Similar))
	}
}

// TestAPISimilarAndDriftNeedReadRole: over real HTTP behind a tokens file
// the read role may ask for similar nodes and drift; no token may not.
func TestAPISimilarAndDriftNeedReadRole(t *testing.T) {
	v, _ := buildView(t, paymentsLog(5, 300), []uint64{100, 300}, nil)
	s := serve(t, ServerConfig{Addr: "127.0.0.1:0", TokensFile: tokensFile(t)}, New(newSimilarView(v), Options{}))
	for _, path := range []string{nodePath("acct-001") + "/similar", nodePath("acct-001") + "/similar?seq=100", "/v1/drift", "/v1/drift/series?every=1h"} {
		if code, body := do(t, http.DefaultClient, s.URL(), call{path: path, token: readToken}); code != http.StatusOK {
			t.Errorf("GET %s with the read token: %d %s", path, code, body)
		}
		if code, _ := do(t, http.DefaultClient, s.URL(), call{path: path}); code != http.StatusUnauthorized {
			t.Errorf("GET %s without a token: %d, want 401", path, code)
		}
	}
}
