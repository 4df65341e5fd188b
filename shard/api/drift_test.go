package api

import (
	"encoding/json"
	"net/http"
	"net/url"
	"testing"
	"time"

	"orbitwatch/delta"
	"orbitwatch/delta/gdv"
	"orbitwatch/shard"
)

// profileOf is the GCD-11 profile of a snapshot's recounted vectors, rows
// in the order of names (the dictionary's, as the store's: sums of floats
// depend on their order).
func profileOf(t *testing.T, s snapshot, names []string) *gdv.Profile {
	t.Helper()
	v := delta.NewVectors(len(s.vectors), 15)
	for x, n := range names[:len(s.vectors)] {
		copy(v.Row(uint32(x)), s.vectors[n])
	}
	p, err := gdv.NewProfile(v, gdv.GCD11Orbits())
	if err != nil {
		t.Fatal(err)
	}
	return p
}

func readDrift(t *testing.T, h http.Handler, path string) DriftJSON {
	t.Helper()
	code, _, body := get(t, h, path)
	if code != http.StatusOK {
		t.Fatalf("GET %s: %d %s", path, code, body)
	}
	decodeStrict(t, body, "kind", "max_nodes", "from", "to", "gcd11", "orbits", "pairs", "shifts")
	var d DriftJSON
	if err := json.Unmarshal(body, &d); err != nil {
		t.Fatal(err)
	}
	return d
}

// TestAPIDrift: GCD-11 between stored cuts equals gdv's on the recounted
// vectors of those cuts (the store's records and the static recount give
// the same matrices, so to the bit), a cut is at 0 from itself, the
// defaults are the first and last cuts, and the series steps read the cut
// in force at each step.
func TestAPIDrift(t *testing.T) {
	log := paymentsLog(21, 900)
	cuts := []uint64{150, 300, 600, 900}
	v, snaps := buildView(t, log, cuts, nil)
	h := New(v, Options{})
	names := v.a.Names()
	for _, c := range []struct {
		query    string
		from, to int // indexes of cuts
	}{
		{"", 0, 3},
		{"?from_seq=300&to_seq=600", 1, 2},
		{"?from_seq=299&to_seq=650", 0, 2},
		{"?from_seq=600&to_seq=600", 2, 2},
		{"?from_seq=900&to_seq=150", 3, 0},
		{"?from=" + url.QueryEscape(log[299].TS.Format(time.RFC3339)) + "&to_seq=900", 1, 3},
	} {
		d := readDrift(t, h, "/v1/drift"+c.query)
		a, b := snaps[c.from], snaps[c.to]
		want, err := gdv.Compare(profileOf(t, a, names), profileOf(t, b, names))
		if err != nil {
			t.Fatal(err)
		}
		if d.From.Seq != a.seq || d.To.Seq != b.seq || d.From.Nodes != profileOf(t, a, names).Nodes {
			t.Errorf("%s: cuts %d→%d with %d nodes, want %d→%d", c.query, d.From.Seq, d.To.Seq, d.From.Nodes, a.seq, b.seq)
		}
		if d.GCD11 != want.GCD || (c.from == c.to) != (d.GCD11 == 0) {
			t.Errorf("%s: gcd11 %v, want %v", c.query, d.GCD11, want.GCD)
		}
		if d.Kind != "undirected" || d.MaxNodes != 4 || len(d.Orbits) != 11 || len(d.Shifts) != 15 || len(d.Pairs) != DriftPairs {
			t.Errorf("%s: %s %d, %d orbits, %d shifts, %d pairs", c.query, d.Kind, d.MaxNodes, len(d.Orbits), len(d.Shifts), len(d.Pairs))
		}
		if p := want.Pairs[0]; d.Pairs[0] != (DriftPair{Orbits: [2]int{p.A, p.B}, Before: p.Before, After: p.After}) {
			t.Errorf("%s: first pair %+v, want %+v", c.query, d.Pairs[0], p)
		}
		for o, s := range want.Shifts {
			got := d.Shifts[o]
			if got.Orbit != o || got.KS != s.KS || got.Before.P90 != s.Before.P90 || got.After.NonZero != s.After.NonZero || got.After.Max != s.After.Max {
				t.Errorf("%s: orbit %d shift %+v, want %+v", c.query, o, got, s)
			}
		}
	}

	code, _, body := get(t, h, "/v1/drift/series?every=2h")
	if code != http.StatusOK {
		t.Fatalf("series: %d %s", code, body)
	}
	var ser DriftSeriesJSON
	if err := json.Unmarshal(body, &ser); err != nil {
		t.Fatal(err)
	}
	span := snaps[3].watermark.Sub(snaps[0].watermark)
	if want := int(span/(2*time.Hour)) + 1; len(ser.Points) != want || ser.Every != "2h" {
		t.Fatalf("series: %d points every %s, want %d every 2h", len(ser.Points), ser.Every, want)
	}
	for i, p := range ser.Points {
		at := snaps[0].watermark.Add(time.Duration(i) * 2 * time.Hour)
		k := 0
		for k+1 < len(cuts) && !snaps[k+1].watermark.After(at) {
			k++
		}
		if !p.At.Equal(at) || p.Seq != snaps[k].seq {
			t.Errorf("point %d: at %v seq %d, want %v and the cut %d", i, p.At, p.Seq, at, snaps[k].seq)
		}
		first, _ := gdv.Compare(profileOf(t, snaps[0], names), profileOf(t, snaps[k], names))
		if p.GCD11First != first.GCD {
			t.Errorf("point %d: gcd11_first %v, want %v", i, p.GCD11First, first.GCD)
		}
	}

	get := http.MethodGet
	wantError(t, h, get, "/v1/drift?from_seq=100", http.StatusNotFound, "no complete cut")
	wantError(t, h, get, "/v1/drift?from=2026-03-01T08:00:00Z", http.StatusNotFound, "no complete cut")
	wantError(t, h, get, "/v1/drift?from=soon", http.StatusBadRequest, "soon")
	wantError(t, h, get, "/v1/drift?from=2026-03-01T10:00:00Z&from_seq=3", http.StatusBadRequest, "not both")
	wantError(t, h, get, "/v1/drift?to_seq=0", http.StatusBadRequest, "to_seq")
	wantError(t, h, get, "/v1/drift?step=1", http.StatusBadRequest, "step")
	wantError(t, h, get, "/v1/drift/series", http.StatusBadRequest, "every")
	wantError(t, h, get, "/v1/drift/series?every=1s", http.StatusBadRequest, "at most")
	wantError(t, h, get, "/v1/drift/series?every=1h&from=2026-03-01T08:00:00Z", http.StatusNotFound, "no complete cut")

	for d, want := range map[time.Duration]string{24 * time.Hour: "1d", 72 * time.Hour: "3d", 12 * time.Hour: "12h", 90 * time.Minute: "1h30m", 45 * time.Second: "45s", 25 * time.Hour: "25h"} {
		if got := FormatSpan(d); got != want {
			t.Errorf("FormatSpan(%v) = %q, want %q", d, got, want)
		}
	}

	// GCD-11 is refused by name for a kind without the 2–4 node orbits.
	dir, err := shard.NewCounting(delta.Directed, 3)
	if err != nil {
		t.Fatal(err)
	}
	dv := &applierView{a: shard.NewApplier(dir, 0, shard.Cuts{}), st: openStore(t, dir, t.TempDir()), c: dir, derive: dir.New(), n: 1}
	for _, path := range []string{"/v1/drift", "/v1/drift/series?every=1d"} {
		wantError(t, New(dv, Options{}), get, path, http.StatusNotImplemented, "undirected")
	}
}
