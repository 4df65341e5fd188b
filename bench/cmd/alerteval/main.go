// Command alerteval measures the alert rules on the demo scenario
// (package bench/demo), whose planted patterns are the ground truth. It
// runs the stream through the applier and the worker's alert stage in
// event time — one process, a real Badger store, no bus, deterministic —
// cutting whenever event time has moved on by -cut, and prints a Markdown
// table: per pattern whether it was alerted, the rules that fired on its
// nodes, the delay in event time from its last payment to the first alert
// on one of its expected nodes (negative: alerted while it formed), and
// the false alerts (on nodes of no pattern, or on the quiet hub) per 10k
// background nodes per simulated day of evaluated traffic.
//
// Targets it reports against: every planted pattern alerted within 10 s
// of event time after it completes; at most 1 false alert per 10k
// background nodes per simulated day.
package main

import (
	"flag"
	"fmt"
	"io"
	"os"
	"slices"
	"strings"
	"time"

	"orbitwatch/bench/demo"
	"orbitwatch/delta"
	"orbitwatch/shard"
	"orbitwatch/shard/alert"
	"orbitwatch/storage"
)

func main() {
	small := flag.Bool("small", false, "the tests' small scenario instead of the demo's")
	seed := flag.Uint64("seed", 1, "scenario seed")
	cut := flag.Duration("cut", time.Minute, "event time between cuts")
	rules := flag.String("alerts", "", "alert rules file (default: the demo's rules, bench/demo/alerts.yaml)")
	defaults := flag.Bool("default-rules", false, "use the alert package's default rules instead of the demo's")
	flag.Parse()
	cfg := demo.DefaultConfig()
	if *small {
		cfg = demo.SmallConfig()
	}
	cfg.Seed = *seed
	sc := demo.Generate(cfg)
	counting, err := shard.NewCounting(delta.Undirected, 4)
	if err != nil {
		fail(err)
	}
	cat := counting.Catalog
	var ac alert.Config
	label := "demo rules (bench/demo/alerts.yaml)"
	switch {
	case *defaults:
		ac, label = alert.DefaultConfig(cat), "alert package defaults"
	case *rules != "":
		ac, err = alert.LoadConfig(*rules, cat)
		label = *rules
	default:
		ac, err = demo.AlertConfig(cat)
	}
	if err != nil {
		fail(err)
	}
	dir, err := os.MkdirTemp("", "alerteval-")
	if err != nil {
		fail(err)
	}
	defer os.RemoveAll(dir)
	began := time.Now()
	res, err := Run(sc, counting, ac, dir, *cut)
	if err != nil {
		fail(err)
	}
	fmt.Fprintf(os.Stderr, "alerteval: %d events, %d cuts in %.1f s\n", len(sc.Events), res.Cuts, time.Since(began).Seconds())
	Report(os.Stdout, sc, res, label, *cut)
}

func fail(err error) {
	fmt.Fprintln(os.Stderr, "alerteval:", err)
	os.Exit(1)
}

// Result is what one run produced.
type Result struct {
	Alerts []alert.Alert
	Cuts   int
	Primed uint64
	// From and To bound the evaluated event time: from the first cut
	// evaluated to the last.
	From, To time.Time
	Stats    alert.Stats
}

// Run replays sc through an applier and an alert stage over a store in
// dir, with a cut at every multiple of every in event time (and after the
// last event), scored and committed as backfill and the worker do.
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
		if stage.Primed() == primed {
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

// Outcome is one pattern's line of the report.
type Outcome struct {
	Pattern demo.Pattern
	// First is the first alert on one of the pattern's expected nodes
	// (nil: none); Delay its event time after the pattern's last payment.
	First *alert.Alert
	Delay time.Duration
	// Rules fired on any of the pattern's nodes, with counts; Alerts is
	// their total.
	Rules  map[string]int
	Alerts int
}

// Score sorts alerts into pattern outcomes and false alerts: those on
// nodes of no pattern or on a quiet pattern's nodes.
func Score(sc *demo.Scenario, alerts []alert.Alert) (out []Outcome, falseAlerts []alert.Alert) {
	for _, p := range sc.Patterns {
		o := Outcome{Pattern: p, Rules: map[string]int{}}
		for i := range alerts {
			a := &alerts[i]
			if !slices.Contains(p.Nodes, a.Node) {
				continue
			}
			o.Rules[a.Rule]++
			o.Alerts++
			if o.First == nil && slices.Contains(p.Expect, a.Node) {
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

// Report writes the Markdown report.
func Report(w io.Writer, sc *demo.Scenario, res Result, label string, every time.Duration) {
	out, falseAlerts := Score(sc, res.Alerts)
	fmt.Fprintf(w, "## Alert evaluation on the demo scenario\n\n")
	fmt.Fprintf(w, "Scenario: %d households, %d shops, %d payroll providers, seed %d; %d events; %d background nodes.  \n",
		sc.Config.Households, sc.Config.Shops, sc.Config.Payrolls, sc.Config.Seed, len(sc.Events), sc.Background)
	fmt.Fprintf(w, "Rules: %s. Cuts every %s of event time: %d cuts, %d of them priming the rules (history shorter than the look-back: evaluated, alerts dropped); evaluated %s to %s.\n\n",
		label, every, res.Cuts, res.Primed, res.From.Format(time.RFC3339), res.To.Format(time.RFC3339))
	fmt.Fprintln(w, "| pattern | completed (event time) | alerted | first alert | delay after completion | alerts on its nodes, by rule | target met |")
	fmt.Fprintln(w, "| --- | --- | --- | --- | --- | --- | --- |")
	for _, o := range out {
		p := o.Pattern
		rules := ruleCounts(o.Rules)
		if p.Quiet {
			met := "yes"
			if o.Alerts > 0 {
				met = "no"
			}
			fmt.Fprintf(w, "| %s (%s, quiet) | — | %d alerts | — | — | %s | %s |\n", p.Name, p.Nodes[0], o.Alerts, rules, met)
			continue
		}
		if o.First == nil {
			fmt.Fprintf(w, "| %s | %s | no | — | — | %s | no |\n", p.Name, p.Complete.Format(time.TimeOnly), rules)
			continue
		}
		met := "no"
		if o.Delay <= 10*time.Second {
			met = "yes"
		}
		fmt.Fprintf(w, "| %s | %s | yes | %s on %s at %s | %s | %s | %s |\n", p.Name, p.Complete.Format(time.TimeOnly), o.First.Rule, o.First.Node,
			o.First.EventTime.Format(time.TimeOnly), o.Delay, rules, met)
	}
	rate := FalseRate(len(falseAlerts), sc.Background, res.To.Sub(res.From))
	met := "yes"
	if rate > 1 {
		met = "no"
	}
	fmt.Fprintf(w, "\nFalse alerts: %d over %.2f simulated days on %d background nodes = **%.2f per 10k background nodes per day** (target ≤ 1: %s).\n",
		len(falseAlerts), res.To.Sub(res.From).Hours()/24, sc.Background, rate, met)
	if len(falseAlerts) > 0 {
		byRule := map[string]int{}
		for _, a := range falseAlerts {
			byRule[a.Rule]++
		}
		fmt.Fprintf(w, "False alerts by rule: %s.\n", ruleCounts(byRule))
	}
	fmt.Fprintf(w, "Evaluator: %d alerts emitted, %d held back by the rate cap, %d kept quiet by a cool-down.\n", res.Stats.Emitted, res.Stats.Held, res.Stats.Cooled)
}

func ruleCounts(m map[string]int) string {
	if len(m) == 0 {
		return "none"
	}
	var parts []string
	for r, n := range m {
		parts = append(parts, fmt.Sprintf("%s %d", r, n))
	}
	slices.Sort(parts)
	return strings.Join(parts, ", ")
}
