package alert_test

import (
	"encoding/json"
	"math"
	"reflect"
	"slices"
	"testing"

	"orbitwatch/delta"
	"orbitwatch/delta/catalog"
	"orbitwatch/shard/alert"
	"orbitwatch/storage"
)

func undirected4(t testing.TB) *catalog.Catalog {
	t.Helper()
	cat, err := catalog.New(delta.Undirected, 4)
	if err != nil {
		t.Fatal(err)
	}
	return cat
}

func records(t *testing.T, as []alert.Alert) []storage.AlertRecord {
	t.Helper()
	recs := alert.Records(as)
	for i, r := range recs {
		back, err := alert.FromRecord(r)
		if err != nil {
			t.Fatal(err)
		}
		if !reflect.DeepEqual(back, as[i]) {
			t.Fatalf("alert through its record: got %+v, want %+v", back, as[i])
		}
	}
	return recs
}

// TestPlantedPatternsAlertControlQuiet replays the background stream with
// each planted pattern and the control stream with random payments in
// their place, under the default rules with both baselines. Every planted
// pattern must raise its rule's alert on its nodes, every alert of a
// planted run must be on a node within two hops of the pattern, and the
// control must raise none.
func TestPlantedPatternsAlertControlQuiet(t *testing.T) {
	t.Parallel()
	cat := undirected4(t)
	for _, mode := range []alert.BaselineMode{alert.BaselineLookback, alert.BaselineDecayed} {
		cfg := alert.DefaultConfig(cat)
		cfg.Baseline = mode
		t.Run(mode.String(), func(t *testing.T) {
			t.Parallel()
			ctl := replay(t, cfg, streamOf(1, nil), nil, 0)
			for _, a := range ctl.alerts {
				t.Errorf("control: alert %s on %s at %v, score %.3f", a.Rule, a.Node, a.EventTime, a.Score)
			}
			if s := ctl.ev.Stats(); s.Nodes < 10000 {
				t.Fatalf("control evaluated only %d node changes", s.Nodes)
			}
			for _, p := range patterns() {
				var nodes []string
				for _, q := range p.payments {
					nodes = append(nodes, q.src, q.dst)
				}
				got := replay(t, cfg, streamOf(1, p.payments), nodes, 0)
				for rule, want := range p.expect {
					for _, node := range want {
						i := slices.IndexFunc(got.alerts, func(a alert.Alert) bool { return a.Rule == rule && a.Node == node })
						if i < 0 {
							t.Errorf("%s: no %s alert on %s", p.name, rule, node)
							continue
						}
						checkAlert(t, cat, cfg, got, i)
					}
				}
				for i, a := range got.alerts {
					if !got.near[i] {
						t.Errorf("%s: alert %s on %s, which is not within two hops of the pattern", p.name, a.Rule, a.Node)
					}
				}
				t.Logf("%s (%v): %d alerts, stats %+v", p.name, mode, len(got.alerts), got.ev.Stats())
			}
		})
	}
}

// checkAlert holds alert i of r against the vectors the evaluator was
// given: its orbit before/after counts, names, score and fire level.
func checkAlert(t *testing.T, cat *catalog.Catalog, cfg alert.Config, r run, i int) {
	t.Helper()
	a := r.alerts[i]
	rule := cfg.Rules[slices.IndexFunc(cfg.Rules, func(x alert.Rule) bool { return x.Name == a.Rule })]
	if a.Score < rule.Fire || a.Fire != rule.Fire || a.ID != alert.AlertID(a.Rule, a.Node, a.Seq) {
		t.Errorf("alert %+v: score below fire %v or wrong id", a, rule.Fire)
	}
	if len(a.Orbits) == 0 || len(a.Orbits) > cfg.TopOrbits {
		t.Fatalf("alert %s on %s lists %d orbits", a.Rule, a.Node, len(a.Orbits))
	}
	if rule.Kind != alert.Signature && a.Orbits[0].Orbit != rule.Orbit {
		t.Errorf("alert %s on %s lists orbit %d first, want the rule's %d", a.Rule, a.Node, a.Orbits[0].Orbit, rule.Orbit)
	}
	for _, m := range a.Orbits {
		o := cat.Orbits[m.Orbit]
		if m.Name != o.Name || m.Graphlet != cat.Graphlets[o.Graphlet].Name || m.After != r.now[i][m.Orbit] {
			t.Errorf("alert %s on %s: orbit move %+v does not match the catalog or the vector %v", a.Rule, a.Node, m, r.now[i])
		}
		if b := r.baselines[i]; cfg.Baseline == alert.BaselineLookback && b != nil && m.Before != float64(b[m.Orbit]) {
			t.Errorf("alert %s on %s: orbit %d before %v, the baseline read had %d", a.Rule, a.Node, m.Orbit, m.Before, b[m.Orbit])
		}
	}
	switch rule.Kind {
	case alert.OrbitCount:
		if a.Score != float64(r.now[i][rule.Orbit]) {
			t.Errorf("count alert score %v, vector has %d", a.Score, r.now[i][rule.Orbit])
		}
	case alert.OrbitGrowth:
		if cfg.Baseline == alert.BaselineLookback {
			before := 0.0
			if b := r.baselines[i]; b != nil {
				before = float64(b[rule.Orbit])
			}
			if want := float64(r.now[i][rule.Orbit]) / math.Max(before, 1); a.Score != want {
				t.Errorf("growth alert score %v, want %v", a.Score, want)
			}
		}
	}
	if _, err := json.Marshal(a); err != nil {
		t.Error(err)
	}
}

// TestRestoredEvaluatorContinuesTheSame serialises the evaluator part-way
// through a planted run and demands the same alerts as without the break.
func TestRestoredEvaluatorContinuesTheSame(t *testing.T) {
	t.Parallel()
	cat := undirected4(t)
	for _, mode := range []alert.BaselineMode{alert.BaselineLookback, alert.BaselineDecayed} {
		cfg := alert.DefaultConfig(cat)
		cfg.Baseline = mode
		t.Run(mode.String(), func(t *testing.T) {
			t.Parallel()
			restoreCheck(t, cfg, mode)
		})
	}
}

// restoreCheck replays the fan-out run whole and with a restore just
// before the pattern starts.
func restoreCheck(t *testing.T, cfg alert.Config, mode alert.BaselineMode) {
	pays := streamOf(2, patterns()[0].payments)
	whole := replay(t, cfg, pays, nil, 0)
	broken := replay(t, cfg, pays, nil, plantAt*perMinute/cutEvery)
	if len(whole.alerts) == 0 {
		t.Fatalf("%v: the planted run raised no alert", mode)
	}
	if !reflect.DeepEqual(whole.alerts, broken.alerts) || whole.ev.Stats() != broken.ev.Stats() {
		t.Errorf("%v: alerts differ after a restore:\n%+v\n%+v", mode, whole.alerts, broken.alerts)
	}
	a, _ := whole.ev.MarshalBinary()
	b, _ := broken.ev.MarshalBinary()
	if string(a) != string(b) {
		t.Errorf("%v: final states differ after a restore", mode)
	}
}
