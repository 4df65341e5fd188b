// Command alerteval measures the alert rules on the demo scenario
// (package bench/demo), whose planted patterns are the ground truth,
// counted as one graph kind (-kind, -max-nodes). It runs the stream
// through the applier and the worker's alert stage in event time — one
// process, a real Badger store, no bus, deterministic (evaluate.Run) —
// cutting whenever event time has moved on by -cut, and prints a Markdown
// table: per pattern meant for the kind (and the quiet ones) whether its
// rule alerted, the rules that fired on its nodes, the delay in event time
// from its last event to the first alert of its rule on one of its
// expected nodes (negative: alerted while it formed), and the false alerts
// (on nodes of no pattern, or of a quiet one) per 10k background nodes per
// simulated day of evaluated traffic.
//
// Targets it reports against: every planted pattern alerted within 10 s of
// event time after it completes (with -cut 10s; with coarser cuts, by the
// first cut after it); at most 1 false alert per 10k background nodes per
// simulated day. With -margins it also prints, per orbit rule, the
// highest score and count any background node reached.
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
	"orbitwatch/bench/demo/evaluate"
	"orbitwatch/delta"
	"orbitwatch/shard"
	"orbitwatch/shard/alert"
)

func main() {
	small := flag.Bool("small", false, "the tests' small scenario instead of the demo's")
	seed := flag.Uint64("seed", 1, "scenario seed")
	kindName := flag.String("kind", "directed", "graph kind: undirected, directed or signed")
	maxNodes := flag.Int("max-nodes", 0, "graphlet size (default: 3, or 4 for undirected)")
	cut := flag.Duration("cut", time.Minute, "event time between cuts")
	rules := flag.String("alerts", "", "alert rules file (default: the demo's rules of the kind, see bench/demo AlertConfig)")
	defaults := flag.Bool("default-rules", false, "use the alert package's default rules instead of the demo's")
	margins := flag.Bool("margins", false, "also print how close the background came to each orbit rule (evaluate.Margins)")
	flag.Parse()
	kind, err := delta.ParseKind(*kindName)
	if err != nil {
		fail(err)
	}
	k := *maxNodes
	if k == 0 {
		k = map[bool]int{true: 4, false: 3}[kind == delta.Undirected]
	}
	cfg := demo.DefaultConfig()
	if *small {
		cfg = demo.SmallConfig()
	}
	cfg.Seed = *seed
	sc := demo.Generate(cfg)
	counting, err := shard.NewCounting(kind, k)
	if err != nil {
		fail(err)
	}
	cat := counting.Catalog
	var ac alert.Config
	label := "demo rules"
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
	res, err := evaluate.Run(sc, counting, ac, dir, *cut)
	if err != nil {
		fail(err)
	}
	fmt.Fprintf(os.Stderr, "alerteval: %d events, %d cuts in %.1f s\n", len(sc.Events), res.Cuts, time.Since(began).Seconds())
	Report(os.Stdout, sc, kind, k, res, label, *cut)
	if *margins {
		ms, err := evaluate.Margins(sc, counting, ac, *cut)
		if err != nil {
			fail(err)
		}
		ReportMargins(os.Stdout, ms)
	}
}

// ReportMargins writes the margins as a Markdown table.
func ReportMargins(w io.Writer, ms []evaluate.Margin) {
	fmt.Fprintln(w, "\n### How close the background came (every touched background node, every evaluated cut)")
	fmt.Fprintln(w, "\n| rule | kind | fires at | highest score past min_count | on | highest count | on |")
	fmt.Fprintln(w, "| --- | --- | --- | --- | --- | --- | --- |")
	for _, m := range ms {
		score, on := "— (none past min_count)", "—"
		if m.HasScore {
			score, on = fmt.Sprintf("%.3g", m.Score), m.Node+" at "+m.At.Format(time.TimeOnly)
		}
		who := m.CountNode
		if who == "" {
			who = "—"
		}
		fmt.Fprintf(w, "| %s | %s | %g (min_count %d) | %s | %s | %.0f | %s |\n", m.Rule.Name, m.Rule.Kind, m.Rule.Fire, m.Rule.MinCount, score, on, m.Count, who)
	}
}

func fail(err error) {
	fmt.Fprintln(os.Stderr, "alerteval:", err)
	os.Exit(1)
}

// Report writes the Markdown report of res, a run of sc counted as kind
// on up to k nodes with cuts every every.
func Report(w io.Writer, sc *demo.Scenario, kind delta.Kind, k int, res evaluate.Result, label string, every time.Duration) {
	out, falseAlerts := evaluate.Score(sc, kind, k, res.Alerts)
	fmt.Fprintf(w, "## Alert evaluation on the demo scenario, %v 2–%d\n\n", kind, k)
	fmt.Fprintf(w, "Scenario: %d households, %d shops, %d payroll providers, seed %d; %d events; %d background nodes.  \n",
		sc.Config.Households, sc.Config.Shops, sc.Config.Payrolls, sc.Config.Seed, len(sc.Events), sc.Background)
	fmt.Fprintf(w, "Rules: %s. Cuts every %s of event time: %d cuts, %d of them priming the rules (history shorter than the look-back: evaluated, alerts dropped); evaluated %s to %s.\n\n",
		label, every, res.Cuts, res.Primed, res.From.Format(time.RFC3339), res.To.Format(time.RFC3339))
	fmt.Fprintln(w, "| pattern | rule | completed (event time) | alerted | first alert | delay after completion | alerts on its nodes, by rule | target met |")
	fmt.Fprintln(w, "| --- | --- | --- | --- | --- | --- | --- | --- |")
	for _, o := range out {
		p := o.Pattern
		rules := ruleCounts(o.Rules)
		if p.Quiet {
			met := "yes"
			if o.Alerts > 0 {
				met = "no"
			}
			fmt.Fprintf(w, "| %s (%s, quiet) | — | — | %d alerts | — | — | %s | %s |\n", p.Name, p.Nodes[0], o.Alerts, rules, met)
			continue
		}
		if o.First == nil {
			fmt.Fprintf(w, "| %s | %s | %s | no | — | — | %s | no |\n", p.Name, o.Rule, p.Complete.Format(time.TimeOnly), rules)
			continue
		}
		met := "no"
		if o.Delay <= max(10*time.Second, every) {
			met = "yes"
		}
		fmt.Fprintf(w, "| %s | %s | %s | yes | %s at %s | %s | %s | %s |\n", p.Name, o.Rule, p.Complete.Format(time.TimeOnly), o.First.Node,
			o.First.EventTime.Format(time.TimeOnly), o.Delay, rules, met)
	}
	span := res.To.Sub(res.From)
	rate := evaluate.FalseRate(len(falseAlerts), sc.Background, span)
	met := "yes"
	if rate > 1 {
		met = "no"
	}
	fmt.Fprintf(w, "\nFalse alerts: %d over %.2f simulated days on %d background nodes = **%.2f per 10k background nodes per day** (target ≤ 1: %s; one false alert on this run is %.2f).\n",
		len(falseAlerts), span.Hours()/24, sc.Background, rate, met, evaluate.FalseRate(1, sc.Background, span))
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
