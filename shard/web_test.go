package shard

import (
	"encoding/json"
	"io/fs"
	"net/http"
	"regexp"
	"slices"
	"strings"
	"testing"
	"time"
)

// TestWebPage checks that the page and its files are served from the
// binary and that none of them reaches outside it (the machines are
// offline): no http(s) URL but the SVG namespace name.
func TestWebPage(t *testing.T) {
	views, _ := buildShards(t, 1, tailedTriangle(), []uint64{5})
	h := NewAPI(views[0], APIOptions{})
	for path, want := range map[string]string{"/": "text/html", "/ui/app.js": "javascript", "/ui/style.css": "text/css"} {
		code, hdr, body := get(t, h, path)
		if code != http.StatusOK || !strings.Contains(hdr.Get("Content-Type"), want) || len(body) == 0 {
			t.Fatalf("GET %s: %d %q, %d bytes", path, code, hdr.Get("Content-Type"), len(body))
		}
	}
	_, _, page := get(t, h, "/")
	for _, s := range []string{`<label for="node-id">`, `src="/ui/app.js"`, `href="/ui/style.css"`, `id="recent"`} {
		if !strings.Contains(string(page), s) {
			t.Errorf("page lacks %s", s)
		}
	}
	url := regexp.MustCompile(`https?://[^"'\s)]+`)
	fs.WalkDir(webFiles, "web", func(p string, d fs.DirEntry, err error) error {
		if err != nil || d.IsDir() {
			return err
		}
		b, _ := webFiles.ReadFile(p)
		for _, u := range url.FindAllString(string(b), -1) {
			if u != "http://www.w3.org/2000/svg" {
				t.Errorf("%s refers to %s", p, u)
			}
		}
		return nil
	})
	if code, _, _ := get(t, h, "/ui/missing.js"); code != http.StatusNotFound {
		t.Fatalf("missing asset: %d", code)
	}
	if code, _, _ := get(t, h, "/v1/nope"); code != http.StatusNotFound {
		t.Fatalf("unknown endpoint: %d", code)
	}
}

// TestHistoryEndpoint reads a node's versions back at both checkpoints of
// the tailed triangle and compares them with the applier's vectors there.
func TestHistoryEndpoint(t *testing.T) {
	views, snaps := buildShards(t, 1, tailedTriangle(), []uint64{4, 5})
	h := NewAPI(views[0], APIOptions{})
	type hist struct {
		Node     string
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
	if all.Node != idPercent || len(all.Versions) != 2 {
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
		if code, _, _ := get(t, h, nodePath(idPercent)+"/history"+q); code != http.StatusBadRequest {
			t.Errorf("history%s: %d, want 400", q, code)
		}
	}
	if code, _, _ := get(t, h, nodePath("nobody")+"/history"); code != http.StatusNotFound {
		t.Errorf("history of an unknown node: %d, want 404", code)
	}
}

func TestThin(t *testing.T) {
	cases := []struct {
		n, limit int
		want     []int
	}{
		{3, 5, []int{0, 1, 2}},
		{10, 3, []int{0, 4, 9}},
		{10, 1, []int{9}},
		{5, 5, []int{0, 1, 2, 3, 4}},
	}
	for _, c := range cases {
		if got := thin(c.n, c.limit); !slices.Equal(got, c.want) {
			t.Errorf("thin(%d, %d) = %v, want %v", c.n, c.limit, got, c.want)
		}
	}
}

func TestCatalogAlertsNeighborsEndpoints(t *testing.T) {
	views, _ := buildShards(t, 1, tailedTriangle(), []uint64{5})
	h := NewAPI(views[0], APIOptions{})
	code, _, body := get(t, h, "/v1/catalog")
	var cat struct {
		Kind   string
		Orbits []orbitJSON
	}
	if err := json.Unmarshal(body, &cat); code != http.StatusOK || err != nil {
		t.Fatalf("catalog: %d %v", code, err)
	}
	// Pržulj 2007: 15 orbits on 2–4 nodes, orbit 14 the K4.
	if cat.Kind != "undirected" || len(cat.Orbits) != 15 || cat.Orbits[14].Name != "K4" || cat.Orbits[8].Graphlet != "4-cycle" {
		t.Fatalf("catalog: %+v", cat)
	}
	code, _, body = get(t, h, "/v1/alerts")
	if code != http.StatusOK || strings.TrimSpace(string(body)) != `{"shard":0,"alerts":[]}` {
		t.Fatalf("alerts of a store without any: %d %s", code, body)
	}
	for _, q := range []string{"?since=soon", "?limit=1001", "?colour=red"} {
		if code, _, _ := get(t, h, "/v1/alerts"+q); code != http.StatusBadRequest {
			t.Errorf("alerts%s: %d, want 400", q, code)
		}
	}
	if code, _, _ := get(t, h, "/v1/alerts?since=2026-03-01T09:00:00Z&node=x&rule=ring&limit=5"); code != http.StatusOK {
		t.Errorf("alerts with every filter: %d", code)
	}
	// A view without an adjacency reader (a store only) cannot answer.
	if code, _, _ := get(t, h, nodePath(idPercent)+"/neighbors"); code != http.StatusNotImplemented {
		t.Errorf("neighbours from a store-only view: %d, want 501", code)
	}
}
