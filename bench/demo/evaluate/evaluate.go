package evaluate

import (
	"fmt"
	"math"
	"slices"
	"time"

	"orbitwatch/bench/demo"
	"orbitwatch/delta"
	"orbitwatch/shard"
	"orbitwatch/shard/alert"
	"orbitwatch/storage"
)

// Result is what one evaluation run produced.
type Result struct {
	Alerts []alert.Alert
	Cuts   int
	Primed uint64
	// From and To bound the evaluated event time: from the first cut
	// evaluated to the last.
	From, To time.Time
	Stats    alert.Stats
}

// Run replays sc through an applier counting with counting and an alert
// stage with the rules ac over a store in dir, with a cut at every
// multiple of every in event time (and a flush after the last event),
// scored and committed as backfill and the worker do: the real counters,
// the real alert stage and evaluator, a real Badger store.
func Run(sc *demo.Scenario, counting *shard.Counting, ac alert.Config, dir string, every time.Duration) (Result, error) {
	cat := counting.Catalog
	st, err := storage.Open(dir, storage.Settings{Kind: cat.Kind, MaxNodes: cat.MaxNodes, NumOrbits: cat.NumOrbits()})
	if err != nil {
		return Result{}, err
	}
	defer st.Close()
	ap := shard.NewApplier(counting, 0, shard.Cuts{Every: every})
	stage := shard.NewAlertStage(alert.New(ac, cat), counting)
	if err := stage.Restore(st, &storage.State{}); err != nil {
		return Result{}, err
	}
	com := shard.NewCommitter(st, 16)
	var res Result
	ap.OnCut = func(cp *storage.Checkpoint) error {
		primed := stage.Primed()
		got, err := stage.Evaluate(ap, cp, nil, time.Time{})
		if err != nil {
			return err
		}
		if !cp.Flush && stage.Primed() == primed {
			if res.From.IsZero() {
				res.From = cp.Watermark
			}
			res.To = cp.Watermark
		}
		res.Alerts = append(res.Alerts, got...)
		res.Cuts++
		return com.Put(cp)
	}
	for i, ev := range sc.Events {
		if err := ap.Apply(uint64(i+1), ev); err != nil {
			return res, fmt.Errorf("event %d: %w", i+1, err)
		}
	}
	if err := ap.Cut(); err != nil {
		return res, err
	}
	if err := com.Close(); err != nil {
		return res, err
	}
	stored, err := st.Alerts(storage.AlertFilter{})
	if err != nil {
		return res, err
	}
	if len(stored) != len(res.Alerts) {
		return res, fmt.Errorf("%d alerts stored, %d raised", len(stored), len(res.Alerts))
	}
	res.Primed, res.Stats = stage.Primed(), stage.Evaluator().Stats()
	return res, nil
}

// RunDemo is Run with the product's counters of kind on up to k nodes
// and the demo's rules for them (demo.AlertConfig), which it returns.
func RunDemo(sc *demo.Scenario, kind delta.Kind, k int, dir string, every time.Duration) (Result, alert.Config, error) {
	counting, err := shard.NewCounting(kind, k)
	if err != nil {
		return Result{}, alert.Config{}, err
	}
	ac, err := demo.AlertConfig(counting.Catalog)
	if err != nil {
		return Result{}, alert.Config{}, err
	}
	res, err := Run(sc, counting, ac, dir, every)
	return res, ac, err
}

// Outcome is one pattern's result in a run.
type Outcome struct {
	Pattern demo.Pattern
	// Rule is the rule that is to find the pattern under the run's
	// counting ("" for a quiet pattern).
	Rule string
	// First is the first alert of Rule on one of the pattern's expected
	// nodes (nil: none); Delay its event time after the pattern's last
	// event.
	First *alert.Alert
	Delay time.Duration
	// Rules fired on any of the pattern's nodes, with counts; Alerts is
	// their total.
	Rules  map[string]int
	Alerts int
}

// Score sorts the alerts of a run counting with the catalog of kind and
// maxNodes into outcomes of the patterns its rules are to find and the
// quiet ones (demo.Scenario.Expected), and false alerts: those on nodes of no
// pattern or of a quiet one. Alerts on a pattern the run is not to find
// are neither.
func Score(sc *demo.Scenario, kind delta.Kind, maxNodes int, alerts []alert.Alert) (out []Outcome, falseAlerts []alert.Alert) {
	for _, p := range sc.Expected(kind, maxNodes) {
		rule, _ := p.FoundWith(kind, maxNodes)
		o := Outcome{Pattern: p, Rule: rule, Rules: map[string]int{}}
		for i := range alerts {
			a := &alerts[i]
			if !slices.Contains(p.Nodes, a.Node) {
				continue
			}
			o.Rules[a.Rule]++
			o.Alerts++
			if o.First == nil && a.Rule == rule && slices.Contains(p.Expect, a.Node) {
				o.First, o.Delay = a, a.EventTime.Sub(p.Complete)
			}
		}
		out = append(out, o)
	}
	for _, a := range alerts {
		if m := sc.Member(a.Node); m == "" || sc.Pattern(m).Quiet {
			falseAlerts = append(falseAlerts, a)
		}
	}
	return out, falseAlerts
}

// FalseRate is false alerts per 10k background nodes per day of
// evaluated event time.
func FalseRate(n, background int, span time.Duration) float64 {
	days := span.Hours() / 24
	if days <= 0 || background == 0 {
		return 0
	}
	return float64(n) / (float64(background) / 1e4) / days
}

// FalseBound returns the largest number of false alerts a run over
// background nodes and span of event time may raise and still be taken
// to meet a target rate (false alerts per 10k background nodes per day):
// the least k with P(X > k) < p for X Poisson with mean
// target · background/10⁴ · days. A rule set whose false alerts come at
// the target rate, independently, exceeds it with probability below p;
// one that exceeds it is taken to miss the target.
func FalseBound(target float64, background int, span time.Duration, p float64) int {
	lambda := target * float64(background) / 1e4 * span.Hours() / 24
	term := math.Exp(-lambda) // P(X = 0)
	cdf := term
	k := 0
	for 1-cdf >= p {
		k++
		term *= lambda / float64(k)
		cdf += term
	}
	return k
}
