package alert_test

import (
	"slices"
	"strings"
	"testing"
	"time"

	"orbitwatch/shard/alert"
)

// TestParseWith reads the with orbits of a rule as a list (weight 1) and
// as a mapping, by id, name and short name, and names the line of every
// mistake.
func TestParseWith(t *testing.T) {
	cat := undirected4(t)
	cfg, err := alert.ParseConfig([]byte(`
rules:
  - name: paths
    kind: orbit-count
    orbit: end of 3-path
    with: [middle of 3-path, 5]
    fire: 10
  - name: closed
    kind: orbit-share
    orbit: 8
    with:
      K4: 2
    against: [end of 4-path]
    fire: 0.5
`), cat)
	if err != nil {
		t.Fatal(err)
	}
	if want := []alert.OrbitWeight{{Orbit: 2, Weight: 1}, {Orbit: 5, Weight: 1}}; cfg.Rules[0].Orbit != 1 || !slices.Equal(cfg.Rules[0].With, want) {
		t.Errorf("list with: orbit %d with %v, want 1 with %v", cfg.Rules[0].Orbit, cfg.Rules[0].With, want)
	}
	if want := []alert.OrbitWeight{{Orbit: 14, Weight: 2}}; !slices.Equal(cfg.Rules[1].With, want) {
		t.Errorf("mapping with: %v, want %v", cfg.Rules[1].With, want)
	}
	head := "rules:\n  - name: a\n    kind: orbit-count\n    orbit: 8\n    fire: 3\n"
	cases := []struct{ name, text, want string }{
		{"own orbit", head + "    with: [4-cycle]\n", "line 6: with lists the rule's own orbit 8"},
		{"twice", head + "    with:\n      4: 1\n      end of 4-path: 2\n", "line 6: with lists orbit 4 twice"},
		{"zero weight", head + "    with:\n      4: 0\n", "line 6: with weight 0 of orbit 4 must be a finite number > 0"},
		{"empty", head + "    with: []\n", "line 6: with is an empty list"},
		{"scalar", head + "    with: 4\n", "line 6: with must be a list of orbits or a mapping"},
		{"on a signature rule", "rules:\n  - name: a\n    kind: signature\n    fire: 0.4\n    with: [4]\n", "line 5: with is only for orbit rules, not signature"},
		{"against repeats with", "rules:\n  - name: a\n    kind: orbit-share\n    orbit: 8\n    fire: 0.4\n    with: [4]\n    against: [4, 9]\n",
			"line 7: against lists orbit 4, which with already counts"},
	}
	for _, c := range cases {
		_, err := alert.ParseConfig([]byte(c.text), cat)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: got %v, want an error containing %q", c.name, err, c.want)
		}
	}
}

// TestWithAddsToTheRuleCount scores count, growth and share rules whose
// count is orbit 8 plus 2 × orbit 14 (weights by hand), with MinCount on
// that sum, and checks the alert lists the rule's own orbits first (with
// orbits only where the node has them).
func TestWithAddsToTheRuleCount(t *testing.T) {
	cat := undirected4(t)
	with := []alert.OrbitWeight{{Orbit: 14, Weight: 2}}
	gate := func(r alert.Rule) alert.Rule {
		r.MinDegree, r.MinTotal, r.MinCount, r.With = 3, 10, 5, with
		return r
	}
	cfg := configOf(
		gate(alert.Rule{Name: "count", Kind: alert.OrbitCount, Orbit: 8, Fire: 7, Rearm: 1}),
		gate(alert.Rule{Name: "growth", Kind: alert.OrbitGrowth, Orbit: 8, Fire: 3, Rearm: 1.5}),
		gate(alert.Rule{Name: "share", Kind: alert.OrbitShare, Orbit: 8, Against: []alert.OrbitWeight{{Orbit: 4, Weight: 1}}, Fire: 0.5, Rearm: 0.2}),
	)
	cfg.TopOrbits = 4
	ev := alert.New(cfg, cat)
	// Now: 3 4-cycles and 2 K4s make a count of 3 + 2·2 = 7; 7 ends of
	// 4-paths make the share 7 / 14. The baseline's count is 1 + 2·0 = 1,
	// a growth of 7. With orbit 8 alone (3) every rule would be quiet:
	// below 7, below MinCount 5, a share of 3/10.
	now := cycleVector(3)
	now[14], now[4] = 2, 7
	base := cycleVector(1)
	got := ev.Evaluate(alert.Cut{Seq: 1, EventTime: t0}, []alert.NodeChange{{Node: "x", Degree: 4, Now: now, Baseline: base}})
	want := map[string]float64{"count": 7, "growth": 7, "share": 0.5}
	if len(got) != len(want) {
		t.Fatalf("%d alerts %+v, want one per rule", len(got), got)
	}
	for _, a := range got {
		if a.Score != want[a.Rule] {
			t.Errorf("rule %s scored %v, want %v", a.Rule, a.Score, want[a.Rule])
		}
		if len(a.Orbits) < 2 || a.Orbits[0].Orbit != 8 || a.Orbits[1].Orbit != 14 || a.Orbits[1].After != 2 || a.Orbits[1].Before != 0 {
			t.Errorf("rule %s lists %+v, want orbit 8 then 14 (2 now, 0 before)", a.Rule, a.Orbits)
		}
	}
	// A node without K4s: its count is its 4-cycles alone, 6 ≥ MinCount
	// but below the count rule's fire and a share of 6/16; it grows ×6,
	// and the K4 orbit is not listed.
	ev = alert.New(cfg, cat)
	now = cycleVector(6)
	got = ev.Evaluate(alert.Cut{Seq: 1, EventTime: t0.Add(time.Hour)}, []alert.NodeChange{{Node: "y", Degree: 4, Now: now, Baseline: cycleVector(1)}})
	for _, a := range got {
		if a.Rule == "count" {
			t.Errorf("count rule fired at %v < 7", a.Score)
		}
		for _, m := range a.Orbits {
			if m.Orbit == 14 {
				t.Errorf("rule %s lists orbit 14, which the node never had", a.Rule)
			}
		}
	}
	if len(got) != 1 || got[0].Rule != "growth" || got[0].Score != 6 {
		t.Errorf("alerts %+v on a node of 6 4-cycles, want growth alone, scored 6", got)
	}
}
