package shard

import (
	"testing"
	"time"

	"orbitwatch/bench/demo"
	"orbitwatch/delta"
	"orbitwatch/shard/alert"
	"orbitwatch/storage"
)

// backfillDemo applies the demo scenario of cfg into a store in dir with
// the demo's rules at one-minute cuts, as backfill does, and returns the
// store, the alerts raised and the time spent evaluating rules and
// applying events.
func backfillDemo(tb testing.TB, cfg demo.Config, dir string) (st *storage.Store, alerts []alert.Alert, eval, apply time.Duration, cuts int) {
	tb.Helper()
	sc := demo.Generate(cfg)
	c, rules := demoRules(tb)
	var err error
	if st, err = storage.Open(dir, storage.Settings{Kind: delta.Undirected, MaxNodes: 4, NumOrbits: c.Catalog.NumOrbits()}); err != nil {
		tb.Fatal(err)
	}
	com := NewCommitter(st, 64)
	a := NewApplier(c, 0, demoCuts)
	stage := NewAlertStage(alert.New(rules, c.Catalog), c)
	a.OnCut = func(cp *storage.Checkpoint) error {
		t0 := time.Now()
		got, err := stage.Evaluate(a, cp, nil, time.Time{})
		eval += time.Since(t0)
		alerts = append(alerts, got...)
		cuts++
		if err != nil {
			return err
		}
		return com.Put(cp)
	}
	t0 := time.Now()
	for i, e := range sc.Events {
		if err := a.Apply(uint64(i+1), e); err != nil && !isReject(err) {
			tb.Fatal(err)
		}
	}
	if err := a.Cut(); err != nil {
		tb.Fatal(err)
	}
	apply = time.Since(t0) - eval
	if err := com.Close(); err != nil {
		tb.Fatal(err)
	}
	return st, alerts, eval, apply, cuts
}

// TestEvaluateStoredEqualsBackfill: the demo's rules evaluated over the
// stored history of the small scenario raise exactly the alerts the
// backfill raised with them (ids, cuts, scores, orbit moves), and from a
// later cut on, the alerts of the backfill from there whose rule had not
// fired for the node in the cool-down before.
func TestEvaluateStoredEqualsBackfill(t *testing.T) {
	st, want, _, _, _ := backfillDemo(t, demo.SmallConfig(), t.TempDir())
	defer st.Close()
	c, rules := demoRules(t)
	res, err := EvaluateStored(st, c, alert.New(rules, c.Catalog), 0, st.Seq(), nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(want) == 0 || len(res.Alerts) != len(want) {
		t.Fatalf("%d alerts re-evaluated, %d raised by the backfill", len(res.Alerts), len(want))
	}
	for i := range want {
		a, b := res.Alerts[i], want[i]
		if a.ID != b.ID || a.Seq != b.Seq || a.Score != b.Score || !a.EventTime.Equal(b.EventTime) || len(a.Orbits) != len(b.Orbits) {
			t.Fatalf("alert %d: re-evaluated %+v, backfill %+v", i, a, b)
		}
		for j := range a.Orbits {
			if a.Orbits[j] != b.Orbits[j] {
				t.Fatalf("alert %s orbit move %d: %+v, backfill %+v", a.ID, j, a.Orbits[j], b.Orbits[j])
			}
		}
	}
	if res.Primed == 0 || res.Active == 0 || res.Cuts == 0 {
		t.Fatalf("evaluation %+v: nothing primed, active or cut", res)
	}
	// From the middle of the history: every alert there was raised by the
	// backfill too (a fresh evaluator only adds alerts a cool-down or a
	// disarmed rule held back).
	mid := want[len(want)/2]
	part, err := EvaluateStored(st, c, alert.New(rules, c.Catalog), mid.Seq, st.Seq(), nil)
	if err != nil {
		t.Fatal(err)
	}
	if part.From.Seq != mid.Seq || part.Primed != 0 {
		t.Fatalf("evaluation from seq %d starts at %d with %d primed cuts", mid.Seq, part.From.Seq, part.Primed)
	}
	raised := map[string]bool{}
	for _, a := range want {
		raised[a.ID] = true
	}
	later := 0
	for _, a := range want {
		if a.Seq >= mid.Seq {
			later++
		}
	}
	if len(part.Alerts) < later {
		t.Fatalf("from seq %d: %d alerts, the backfill raised %d there", mid.Seq, len(part.Alerts), later)
	}
}

// BenchmarkEvaluateStoredDemoDay re-evaluates the demo's rules over the
// stored history of one simulated day of the demo scenario (about 22k
// events, one-minute cuts), and reports beside it what the backfill that
// wrote the history spent applying events and evaluating the rules at its
// cuts, per cut (the alert stage's cost against the cut's own).
func BenchmarkEvaluateStoredDemoDay(b *testing.B) {
	st, alerts, eval, apply, cuts := backfillDemo(b, demo.DefaultConfig(), b.TempDir())
	defer st.Close()
	c, rules := demoRules(b)
	b.ResetTimer()
	for range b.N {
		res, err := EvaluateStored(st, c, alert.New(rules, c.Catalog), 0, st.Seq(), nil)
		if err != nil {
			b.Fatal(err)
		}
		if len(res.Alerts) != len(alerts) {
			b.Fatalf("%d alerts re-evaluated, %d raised", len(res.Alerts), len(alerts))
		}
	}
	b.ReportMetric(float64(cuts), "cuts")
	b.ReportMetric(float64(apply.Microseconds())/float64(cuts), "apply-µs/cut")
	b.ReportMetric(float64(eval.Microseconds())/float64(cuts), "alert-µs/cut")
	b.ReportMetric(float64(b.Elapsed().Seconds())/float64(b.N)/(apply+eval).Seconds(), "reeval/backfill")
}

// BenchmarkSweepAddsAlerts measures what scoring only the nodes whose
// records a cut touched misses: the small demo scenario is evaluated with
// the demo's rules as the product does with no sweep, with an hourly
// sweep (alert.Config.Sweep), and scoring every node at every cut (a
// sweep at each one-minute cut). It reports the alerts of each and those
// only the full sweep raises, and the evaluation cost of the hourly and
// the full sweep against none.
func BenchmarkSweepAddsAlerts(b *testing.B) {
	sc := demo.Generate(demo.SmallConfig())
	c, rules := demoRules(b)
	run := func(sweep time.Duration) (map[string]bool, time.Duration) {
		cfg := rules
		cfg.Sweep = sweep
		a := NewApplier(c, 0, demoCuts)
		stage := NewAlertStage(alert.New(cfg, c.Catalog), c)
		ids := map[string]bool{}
		var took time.Duration
		a.OnCut = func(cp *storage.Checkpoint) error {
			t0 := time.Now()
			got, err := stage.Evaluate(a, cp, nil, time.Time{})
			took += time.Since(t0)
			for _, al := range got {
				ids[al.ID] = true
			}
			return err
		}
		for i, e := range sc.Events {
			if err := a.Apply(uint64(i+1), e); err != nil && !isReject(err) {
				b.Fatal(err)
			}
		}
		return ids, took
	}
	var none, hourly, full map[string]bool
	var tNone, tHourly, tFull time.Duration
	for range b.N {
		var t time.Duration
		none, t = run(0)
		tNone += t
		hourly, t = run(time.Hour)
		tHourly += t
		full, t = run(demoCuts.Every)
		tFull += t
	}
	only := func(a, b map[string]bool) (n int) {
		for id := range a {
			if !b[id] {
				n++
			}
		}
		return n
	}
	b.ReportMetric(float64(len(none)), "alerts-no-sweep")
	b.ReportMetric(float64(len(hourly)), "alerts-hourly")
	b.ReportMetric(float64(len(full)), "alerts-full")
	b.ReportMetric(float64(only(full, none)), "full-not-none")
	b.ReportMetric(float64(only(full, hourly)), "full-not-hourly")
	b.ReportMetric(tHourly.Seconds()/tNone.Seconds(), "hourly-cost/none")
	b.ReportMetric(tFull.Seconds()/tNone.Seconds(), "full-cost/none")
}
