package alert_test

import (
	"fmt"
	"reflect"
	"testing"
	"time"

	"orbitwatch/shard/alert"
)

var t0 = time.Date(2026, 9, 1, 8, 0, 0, 0, time.UTC)

// cycleVector is a 15-orbit vector of a node with degree 4, enough total
// count for the default gates, and c 4-cycles.
func cycleVector(c uint64) []uint64 {
	v := []uint64{4, 8, 6, 0, 10, 10, 6, 4, 0, 0, 0, 0, 0, 0, 0}
	v[8] = c
	return v
}

func ringRule(cooldown time.Duration) alert.Rule {
	return alert.Rule{Name: "ring", Kind: alert.OrbitCount, Orbit: 8, Fire: 3, Rearm: 1, MinDegree: 3, MinTotal: 10, Cooldown: cooldown}
}

func configOf(rules ...alert.Rule) alert.Config {
	return alert.Config{Lookback: time.Hour, TopOrbits: 3, Rules: rules}
}

// step is one cut for one node: its 4-cycle count, the minutes since t0,
// and whether an alert must come out.
type step struct {
	cycles uint64
	at     int
	fire   bool
}

func runSteps(t *testing.T, ev *alert.Evaluator, node string, steps []step) {
	t.Helper()
	for i, s := range steps {
		cut := alert.Cut{Seq: uint64(i + 1), EventTime: t0.Add(time.Duration(s.at) * time.Minute)}
		got := ev.Evaluate(cut, []alert.NodeChange{{Node: node, Degree: 4, Now: cycleVector(s.cycles)}})
		if (len(got) == 1) != s.fire || len(got) > 1 {
			t.Fatalf("step %d (%d cycles at +%dm): %d alerts, want fire=%v", i, s.cycles, s.at, len(got), s.fire)
		}
		if s.fire && (got[0].Score != float64(s.cycles) || got[0].Seq != cut.Seq || got[0].Node != node) {
			t.Fatalf("step %d: alert %+v", i, got[0])
		}
	}
}

func TestHysteresis(t *testing.T) {
	ev := alert.New(configOf(ringRule(0)), undirected4(t))
	runSteps(t, ev, "acct-1", []step{
		{0, 0, false},
		{3, 1, true},  // reaches fire
		{5, 2, false}, // still above: disarmed
		{2, 3, false}, // below fire, not below rearm: still disarmed
		{3, 4, false}, // back at fire without re-arming: quiet
		{1, 5, false}, // at rearm is not below it
		{0, 6, false}, // below rearm: re-armed
		{4, 7, true},  // fires again
	})
	if s := ev.Stats(); s.Emitted != 2 || s.Cooled != 0 || s.Held != 0 || s.Cuts != 8 || s.Nodes != 8 {
		t.Fatalf("stats %+v", s)
	}
}

func TestCooldown(t *testing.T) {
	ev := alert.New(configOf(ringRule(time.Hour)), undirected4(t))
	runSteps(t, ev, "acct-1", []step{
		{3, 0, true},
		{0, 10, false},  // re-armed
		{3, 20, false},  // armed and above, but 20 min after the last alert: cooled
		{4, 59, false},  // still within the hour
		{4, 60, true},   // the hour is over and it was kept armed
		{0, 70, false},  // re-armed
		{3, 200, true},  // long after: fires at once
		{0, 201, false}, // re-armed
		{3, 202, false}, // cooled
	})
	if s := ev.Stats(); s.Emitted != 3 || s.Cooled != 3 {
		t.Fatalf("stats %+v, want 3 emitted and 3 cooled", s)
	}
	// Cool-downs are per node: another node fires at once.
	runSteps(t, ev, "acct-2", []step{{3, 203, true}})
}

func TestRateCapHoldsBackAndCounts(t *testing.T) {
	cfg := configOf(ringRule(0))
	cfg.MaxPerMinute = 2
	ev := alert.New(cfg, undirected4(t))
	nodes := func(prefix string, n int) []alert.NodeChange {
		var out []alert.NodeChange
		for i := range n {
			out = append(out, alert.NodeChange{Node: fmt.Sprintf("%s-%d", prefix, i), Degree: 4, Now: cycleVector(5)})
		}
		return out
	}
	cuts := []struct {
		at      time.Duration
		nodes   []alert.NodeChange
		emitted []string
		held    uint64
	}{
		{0, nodes("a", 5), []string{"a-0", "a-1"}, 3},
		{30 * time.Second, nodes("b", 2), nil, 5},             // same minute: all held
		{61 * time.Second, nodes("c", 1), []string{"c-0"}, 5}, // next minute
		{62 * time.Second, nodes("d", 2), []string{"d-0"}, 6}, // one left in it
		{62 * time.Second, nodes("a", 5), nil, 6},             // a-* are disarmed: held ones count as fired
		{125 * time.Second, nodes("e", 3), []string{"e-0", "e-1"}, 7},
	}
	for i, c := range cuts {
		got := ev.Evaluate(alert.Cut{Seq: uint64(i + 1), EventTime: t0.Add(c.at)}, c.nodes)
		var names []string
		for _, a := range got {
			names = append(names, a.Node)
		}
		if !reflect.DeepEqual(names, c.emitted) || ev.Stats().Held != c.held {
			t.Fatalf("cut %d: emitted %v held %d, want %v held %d", i, names, ev.Stats().Held, c.emitted, c.held)
		}
	}
}

func TestGates(t *testing.T) {
	cat := undirected4(t)
	// Star centres of degree 3 → 12 are at distance ≈ 0.16 and 3 → 5 at
	// ≈ 0.10 (by hand: the terms of orbits 0, 2 and 7 over Σw = 9.13; the
	// twelve orbits at zero on both sides dilute the mean).
	sig := alert.Rule{Name: "shift", Kind: alert.Signature, Fire: 0.08, Rearm: 0.05, MinDegree: 3, MinTotal: 10}
	growth := alert.Rule{Name: "fan-out", Kind: alert.OrbitGrowth, Orbit: 7, Fire: 4, Rearm: 2, MinDegree: 3, MinCount: 20}
	ev := alert.New(configOf(sig, growth, ringRule(0)), cat)
	star := func(d uint64) []uint64 { // a d-star centre: degree d, C(d,2) 2-paths, C(d,3) 3-stars
		v := make([]uint64, 15)
		v[0], v[2], v[7] = d, d*(d-1)/2, d*(d-1)*(d-2)/6
		return v
	}
	cases := []struct {
		name  string
		nc    alert.NodeChange
		rules []string
	}{
		{"degree below the gate", alert.NodeChange{Node: "n1", Degree: 2, Now: cycleVector(9), Baseline: star(4)}, nil},
		{"total below the gate", alert.NodeChange{Node: "n2", Degree: 4, Now: []uint64{3, 0, 3, 1, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0}, Baseline: star(4)}, nil},
		// 3 → 12 payees: 3-stars 1 → 220, ×220; signature shift large.
		{"star from a small baseline", alert.NodeChange{Node: "n3", Degree: 12, Now: star(12), Baseline: star(3)}, []string{"shift", "fan-out"}},
		// A baseline with two neighbours is below the signature gate; the
		// growth rule still scores.
		{"baseline degree below the gate", alert.NodeChange{Node: "n4", Degree: 12, Now: star(12), Baseline: star(2)}, []string{"fan-out"}},
		// No baseline: no signature; growth against nothing (0) is now/1.
		{"no baseline", alert.NodeChange{Node: "n5", Degree: 12, Now: star(12)}, []string{"fan-out"}},
		// Growth ×8 but below min_count.
		{"orbit count below min_count", alert.NodeChange{Node: "n6", Degree: 5, Now: star(5), Baseline: star(3)}, []string{"shift"}},
	}
	for i, c := range cases {
		got := ev.Evaluate(alert.Cut{Seq: uint64(i + 1), EventTime: t0}, []alert.NodeChange{c.nc})
		var rules []string
		for _, a := range got {
			rules = append(rules, a.Rule)
		}
		if !reflect.DeepEqual(rules, c.rules) {
			t.Errorf("%s: rules fired %v, want %v", c.name, rules, c.rules)
		}
	}
}

// TestAlertContent checks one alert field by field against values worked
// out by hand.
func TestAlertContent(t *testing.T) {
	cat := undirected4(t)
	rule := alert.Rule{Name: "fan-out", Kind: alert.OrbitGrowth, Orbit: 7, Fire: 4, Rearm: 2}
	cfg := configOf(rule)
	ev := alert.New(cfg, cat)
	before := []uint64{3, 0, 3, 0, 0, 0, 0, 1, 0, 0, 0, 0, 0, 0, 0}
	now := []uint64{6, 0, 15, 0, 0, 0, 0, 20, 0, 0, 0, 0, 0, 0, 0}
	cut := alert.Cut{Seq: 77, EventTime: t0, WallTime: t0.Add(3 * time.Second)}
	got := ev.Evaluate(cut, []alert.NodeChange{{Node: "acct-9", Degree: 6, Now: now, Baseline: before}})
	if len(got) != 1 {
		t.Fatalf("%d alerts", len(got))
	}
	a := got[0]
	// Per-orbit terms w_i·|ln(u+1) − ln(v+1)|/ln(max+2), with w_0 = 1,
	// w_2 = 1 − ln2/ln15 (o_2 = 2), w_7 = 1 − ln3/ln15 (o_7 = 3):
	// orbit 7: 0.594·ln(21/2)/ln22 = 0.451; orbit 2: 0.744·ln(16/4)/ln17
	// = 0.364; orbit 0: ln(7/4)/ln8 = 0.269. The rule's orbit comes
	// first, then by term: 2, 0.
	want := alert.Alert{
		ID: alert.AlertID("fan-out", "acct-9", 77), Rule: "fan-out", Kind: "orbit-growth", Node: "acct-9",
		Seq: 77, EventTime: t0, DetectedAt: t0.Add(3 * time.Second), Score: 20, Fire: 4,
		Baseline: "lookback", Degree: 6,
		Orbits: []alert.OrbitMove{
			{Orbit: 7, Name: "centre of 3-star", Graphlet: "3-star", Before: 1, After: 20},
			{Orbit: 2, Name: "middle of 3-path", Graphlet: "3-path", Before: 3, After: 15},
			{Orbit: 0, Name: "edge", Graphlet: "edge", Before: 3, After: 6},
		},
	}
	if !reflect.DeepEqual(a, want) {
		t.Fatalf("alert\n got %+v\nwant %+v", a, want)
	}
	if a.ID != alert.AlertID("fan-out", "acct-9", 77) || len(a.ID) != 16 || a.ID == alert.AlertID("fan-out", "acct-9", 78) || a.ID == alert.AlertID("fan-ou", "tacct-9", 77) {
		t.Fatalf("alert ids are not distinct per rule, node and seq")
	}
}

// TestEvaluateDeterministic runs two evaluators on the same inputs.
func TestEvaluateDeterministic(t *testing.T) {
	cat := undirected4(t)
	cfg := alert.DefaultConfig(cat)
	cfg.Baseline = alert.BaselineDecayed
	a, b := alert.New(cfg, cat), alert.New(cfg, cat)
	for i := range 50 {
		var ncs []alert.NodeChange
		for j := range 20 {
			d := uint64(3 + (i*j)%17)
			v := make([]uint64, 15)
			v[0], v[2], v[7], v[8], v[14] = d, d*(d-1)/2, d*(d-1)*(d-2)/6, uint64(i%9), uint64(j%4)
			ncs = append(ncs, alert.NodeChange{Node: fmt.Sprintf("n%d", j), Degree: int(d), Now: v})
		}
		cut := alert.Cut{Seq: uint64(i + 1), EventTime: t0.Add(time.Duration(i) * 7 * time.Minute)}
		x, y := a.Evaluate(cut, ncs), b.Evaluate(cut, ncs)
		if !reflect.DeepEqual(x, y) {
			t.Fatalf("cut %d: evaluators disagree", i)
		}
	}
	if a.Stats().Emitted == 0 {
		t.Fatal("no alerts: the comparison is empty")
	}
	sa, _ := a.MarshalBinary()
	sb, _ := b.MarshalBinary()
	if string(sa) != string(sb) {
		t.Fatal("equal evaluators serialise differently")
	}
}

func TestUnmarshalRefusesBadState(t *testing.T) {
	cat := undirected4(t)
	cfg := configOf(ringRule(time.Hour))
	ev := alert.New(cfg, cat)
	ev.Evaluate(alert.Cut{Seq: 1, EventTime: t0}, []alert.NodeChange{{Node: "acct-1", Degree: 4, Now: cycleVector(5)}})
	good, err := ev.MarshalBinary()
	if err != nil {
		t.Fatal(err)
	}
	decayed := cfg
	decayed.Baseline, decayed.HalfLife = alert.BaselineDecayed, time.Hour
	for i := range good {
		if err := alert.New(cfg, cat).UnmarshalBinary(good[:i]); err == nil {
			t.Fatalf("a state cut to %d of %d bytes was accepted", i, len(good))
		}
	}
	if err := alert.New(cfg, cat).UnmarshalBinary(append(good, 0)); err == nil {
		t.Fatal("a state with a trailing byte was accepted")
	}
	if err := alert.New(decayed, cat).UnmarshalBinary(good); err == nil {
		t.Fatal("a lookback state was accepted by a decayed evaluator")
	}
	// A restored evaluator keeps the cool-down: no alert 10 minutes later.
	re := alert.New(cfg, cat)
	if err := re.UnmarshalBinary(good); err != nil {
		t.Fatal(err)
	}
	runSteps(t, re, "acct-1", []step{{0, 5, false}, {5, 10, false}, {5, 61, true}})
	// A config with the rule renamed starts it afresh.
	renamed := cfg
	renamed.Rules = []alert.Rule{ringRule(time.Hour)}
	renamed.Rules[0].Name = "ring-2"
	re = alert.New(renamed, cat)
	if err := re.UnmarshalBinary(good); err != nil {
		t.Fatal(err)
	}
	runSteps(t, re, "acct-1", []step{{5, 10, true}})
}

func TestForget(t *testing.T) {
	cat := undirected4(t)
	for _, mode := range []alert.BaselineMode{alert.BaselineLookback, alert.BaselineDecayed} {
		cfg := configOf(ringRule(time.Hour))
		cfg.Baseline, cfg.HalfLife = mode, time.Hour
		ev := alert.New(cfg, cat)
		at := func(m int) alert.Cut {
			return alert.Cut{Seq: uint64(m + 1), EventTime: t0.Add(time.Duration(m) * time.Minute)}
		}
		ev.Evaluate(at(0), []alert.NodeChange{{Node: "old", Degree: 4, Now: cycleVector(5)}, {Node: "calm", Degree: 4, Now: cycleVector(0)}})
		ev.Evaluate(at(30), []alert.NodeChange{{Node: "new", Degree: 4, Now: cycleVector(5)}})
		want := map[alert.BaselineMode]int{alert.BaselineLookback: 2, alert.BaselineDecayed: 3}[mode]
		if ev.Nodes() != want {
			t.Fatalf("%v: %d node states, want %d", mode, ev.Nodes(), want)
		}
		if n := ev.Forget(t0.Add(10 * time.Minute)); n != want-1 || ev.Nodes() != 1 {
			t.Fatalf("%v: forgot %d, %d left; want %d forgotten and \"new\" kept", mode, n, ev.Nodes(), want-1)
		}
		// "old" is treated as never seen: it fires again within its former
		// cool-down; "new" is still cooling down.
		got := ev.Evaluate(at(40), []alert.NodeChange{{Node: "old", Degree: 4, Now: cycleVector(5)}, {Node: "new", Degree: 4, Now: cycleVector(0)}, {Node: "new", Degree: 4, Now: cycleVector(6)}})
		if len(got) != 1 || got[0].Node != "old" {
			t.Fatalf("%v: after Forget got %v, want one alert on old", mode, got)
		}
	}
}
