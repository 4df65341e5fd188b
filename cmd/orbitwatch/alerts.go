package main

import (
	"encoding/csv"
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io"
	"math"
	"os"
	"slices"
	"strings"
	"text/tabwriter"
	"time"

	"orbitwatch/internal/progress"
	"orbitwatch/shard"
	"orbitwatch/shard/alert"
	"orbitwatch/shard/api"
	"orbitwatch/storage"
	"orbitwatch/stream"
)

func init() {
	commands["alerts"] = command{"list stored alerts, re-evaluate a rules file over stored history, or measure alerts against labelled cases", runAlerts}
	usages["alerts"] = usageInfo{"orbitwatch alerts --data DATA --rules stricter.yaml --from 2026-03-01 --to 2026-03-31 --labels cases.csv", []string{"data"}}
}

// alertsRun is one alerts command's setting.
type alertsRun struct {
	st         *storage.Store
	counting   *shard.Counting
	from, to   timeFlag
	rule, node string
	verdict    string
	json       bool
	rules      string // a rules file to re-evaluate
	labels     string // a cases file to measure against
	confirmed  bool   // confirmed verdicts count as cases
}

func runAlerts(args []string) int {
	fs := flag.NewFlagSet("alerts", flag.ContinueOnError)
	var r alertsRun
	data := fs.String("data", "", "data `DIR` of backfill, serve, worker or demo")
	fs.Var(&r.from, "from", "first cut's event time: "+timeForms)
	fs.Var(&r.to, "to", "last cut's event time, same forms")
	fs.StringVar(&r.rule, "rule", "", "only alerts of this rule")
	fs.StringVar(&r.node, "node", "", "only alerts on this node `ID`")
	fs.StringVar(&r.verdict, "verdict", "", "only alerts with this triage verdict: "+strings.Join(storage.VerdictNames, ", ")+", or none (not triaged)")
	fs.BoolVar(&r.json, "json", false, "JSON lines (each alert as GET /v1/alerts gives it), or the measurement as one JSON object with --labels")
	fs.StringVar(&r.rules, "rules", "", "re-evaluate this rules `FILE` (YAML) over the stored history instead of listing the stored alerts; nothing is written")
	fs.StringVar(&r.labels, "labels", "", "measure the alerts against labelled cases in this CSV `FILE` (columns node, known_at, and optionally case)")
	fs.BoolVar(&r.confirmed, "confirmed", false, "with --labels: also count every alert an investigator confirmed (triage) as a case known at its cut")
	if code := parseFlags(fs, args); code != 0 {
		return code
	}
	if r.verdict != "" && r.verdict != "none" && !slices.Contains(storage.VerdictNames, r.verdict) {
		return fail("alerts", usagef("--verdict %q: want one of %s, or none", r.verdict, strings.Join(storage.VerdictNames, ", ")))
	}
	if r.confirmed && r.labels == "" {
		return fail("alerts", usagef("--confirmed goes with --labels"))
	}
	st, err := openData(*data)
	if err != nil {
		return fail("alerts", err)
	}
	defer st.Close()
	set := st.Settings()
	if r.counting, err = shard.NewCounting(set.Kind, set.MaxNodes); err != nil {
		return fail("alerts", err)
	}
	r.st = st
	if err := r.run(os.Stdout); err != nil {
		return fail("alerts", err)
	}
	return exitOK
}

func (r *alertsRun) run(w io.Writer) error {
	fromSeq, toSeq, err := r.seqRange()
	if err != nil {
		return err
	}
	verdicts, err := r.st.Verdicts()
	if err != nil {
		return err
	}
	var cases []alert.Case
	if r.labels != "" {
		if cases, err = readCases(r.labels); err != nil {
			return err
		}
	}
	var alerts []alert.Alert
	var rules []string
	var active int
	var first, last storage.CheckpointInfo
	var days float64
	if r.rules != "" {
		ev, err := (&alertFlags{path: r.rules}).evaluator(r.counting)
		if err != nil {
			return usageError(err)
		}
		if r.rule != "" && !slices.ContainsFunc(ev.Config().Rules, func(x alert.Rule) bool { return x.Name == r.rule }) {
			return usagef("--rule %q is not in %s (its rules: %s)", r.rule, r.rules, strings.Join(ruleNames(ev.Config()), ", "))
		}
		rules = ruleNames(ev.Config())
		started := time.Now()
		rep := progress.New(os.Stderr, int64(countCuts(r.st, fromSeq, toSeq)), "alerts", progress.WithUnit("cuts"))
		res, err := shard.EvaluateStored(r.st, r.counting, ev, fromSeq, toSeq, func(storage.CheckpointInfo) { rep.Add(1, 0) })
		rep.Done()
		if err != nil {
			return err
		}
		fmt.Fprintf(os.Stderr, "orbitwatch alerts: %s evaluated at %d cuts from %s to %s (seq %d–%d) in %.1f s: %d alerts%s\n",
			r.rules, res.Cuts, res.From.Watermark.Format(time.RFC3339), res.To.Watermark.Format(time.RFC3339), res.From.Seq, res.To.Seq,
			time.Since(started).Seconds(), len(res.Alerts), primedNote(res.Primed))
		alerts, active, first, last, days = res.Alerts, res.Active, res.From, res.To, res.Days()
	} else {
		recs, err := r.st.Alerts(storage.AlertFilter{SinceSeq: max(fromSeq, 1) - 1, Node: r.node, Rule: r.rule})
		if err != nil {
			return err
		}
		for _, rec := range recs {
			if rec.Seq > toSeq {
				break
			}
			a, err := alert.FromRecord(rec)
			if err != nil {
				return err
			}
			alerts = append(alerts, a)
		}
		if r.rule != "" && len(alerts) == 0 {
			if known, err := r.st.Alerts(storage.AlertFilter{Rule: r.rule, Limit: 1}); err == nil && len(known) == 0 {
				return usagef("--rule %q: no stored alert has this rule", r.rule)
			}
		}
		if r.labels != "" {
			if active, first, last, err = shard.ActiveNodes(r.st, fromSeq, toSeq); err != nil {
				return err
			}
			days = (&shard.StoredEvaluation{From: first, To: last}).Days()
			rules = storedRules(r.st)
		}
	}
	alerts = slices.DeleteFunc(alerts, func(a alert.Alert) bool {
		if r.node != "" && a.Node != r.node || r.rule != "" && a.Rule != r.rule {
			return true
		}
		v, ok := verdicts[a.ID]
		switch r.verdict {
		case "":
			return false
		case "none":
			return ok
		default:
			return !ok || v.Verdict != r.verdict
		}
	})
	if r.labels == "" {
		return printAlerts(w, alerts, verdicts, r.json)
	}
	if r.confirmed {
		// A verdict carries its alert's node and cut: the case was known
		// when the alert was raised.
		for _, v := range verdicts {
			if v.Verdict == storage.VerdictConfirmed {
				cases = append(cases, alert.Case{ID: "triage:" + v.AlertID, Node: v.Node, Known: v.EventTime})
			}
		}
	}
	if r.rule != "" {
		rules = []string{r.rule}
	}
	m := alert.Measure(alerts, cases, rules, active, days, first.Watermark, last.Watermark)
	if r.json {
		return json.NewEncoder(w).Encode(m)
	}
	printMeasurement(w, m)
	return nil
}

// seqRange turns --from and --to into the sequences of the first cut at
// or after --from and the last cut at or before --to.
func (r *alertsRun) seqRange() (from, to uint64, err error) {
	cuts := r.st.Checkpoints()
	from, to = 0, math.MaxUint64
	if r.from.set {
		i := slices.IndexFunc(cuts, func(c storage.CheckpointInfo) bool { return !c.Watermark.Before(r.from.t) })
		if i < 0 {
			return 0, 0, fmt.Errorf("--from %s: the last cut is at %s", r.from.text, cuts[len(cuts)-1].Watermark.Format(time.RFC3339))
		}
		from = cuts[i].Seq
	}
	if r.to.set {
		seq, ok := r.st.SeqAtTime(r.to.t)
		if !ok {
			return 0, 0, fmt.Errorf("--to %s: no retained cut at or before it (the first is at %s)", r.to.text, cuts[0].Watermark.Format(time.RFC3339))
		}
		to = seq
	}
	if from > to {
		return 0, 0, usagef("--from %s comes after --to %s", r.from.text, r.to.text)
	}
	return from, to, nil
}

// evaluator returns the evaluator of the rules file f.path for c's
// catalog.
func (f *alertFlags) evaluator(c *shard.Counting) (*alert.Evaluator, error) {
	cfg, err := alert.LoadConfig(f.path, c.Catalog)
	if err != nil {
		return nil, fmt.Errorf("--rules: %w", err)
	}
	return alert.New(cfg, c.Catalog), nil
}

func ruleNames(cfg alert.Config) []string {
	out := make([]string, len(cfg.Rules))
	for i, r := range cfg.Rules {
		out[i] = r.Name
	}
	return out
}

// storedRules returns the rules of the stored alerts, sorted.
func storedRules(st *storage.Store) []string {
	recs, err := st.Alerts(storage.AlertFilter{})
	if err != nil {
		return nil
	}
	var out []string
	for _, rec := range recs {
		if !slices.Contains(out, rec.Rule) {
			out = append(out, rec.Rule)
		}
	}
	slices.Sort(out)
	return out
}

func countCuts(st *storage.Store, from, to uint64) int {
	n := 0
	for _, c := range st.Checkpoints() {
		if c.Seq >= from && c.Seq <= to {
			n++
		}
	}
	return n
}

func primedNote(n int) string {
	if n == 0 {
		return ""
	}
	return fmt.Sprintf(" (the first %d cuts primed: no stored cut a look-back earlier)", n)
}

// printAlerts writes alerts as JSON lines (the API's objects) or a table.
func printAlerts(w io.Writer, alerts []alert.Alert, verdicts map[string]storage.Verdict, asJSON bool) error {
	if asJSON {
		for _, a := range alerts {
			body, err := json.Marshal(a)
			if err != nil {
				return err
			}
			var v *storage.Verdict
			if x, ok := verdicts[a.ID]; ok {
				v = &x
			}
			if _, err := fmt.Fprintf(w, "%s\n", api.AlertJSON(body, v)); err != nil {
				return err
			}
		}
		return nil
	}
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "event time\tcut\trule\tnode\tscore\tfire\tverdict\tid")
	for _, a := range alerts {
		v := "-"
		if x, ok := verdicts[a.ID]; ok {
			v = x.Verdict
		}
		fmt.Fprintf(tw, "%s\t%d\t%s\t%s\t%.3g\t%.3g\t%s\t%s\n", a.EventTime.Format("2006-01-02 15:04:05"), a.Seq, a.Rule, a.Node, a.Score, a.Fire, v, a.ID)
	}
	if len(alerts) == 0 {
		fmt.Fprintln(tw, "(no alerts)")
	}
	return tw.Flush()
}

// printMeasurement writes the measurement against labels as a table.
func printMeasurement(w io.Writer, m alert.Measurement) {
	fmt.Fprintf(w, "%d cases; %d active nodes over %.1f days of event time (%s to %s)\n\n", m.Cases, m.Active, m.Days,
		m.From.Format("2006-01-02 15:04"), m.To.Format("2006-01-02 15:04"))
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintln(tw, "rule\talerts\tper 10k nodes/day\ton cases\tcases alerted\tmedian delay\tearliest\tlatest\t")
	for _, r := range m.Rules {
		share := "-"
		if r.Alerts > 0 {
			share = fmt.Sprintf("%d (%.0f%%)", r.OnCases, 100*r.Share)
		}
		fmt.Fprintf(tw, "%s\t%d\t%.2f\t%s\t%d of %d\t%s\t%s\t%s\t\n", r.Rule, r.Alerts, r.PerTenKDay, share, r.Alerted, r.Cases,
			hours(r.MedianDelay), hours(r.EarliestLead), hours(r.LatestDelay))
	}
	tw.Flush()
	fmt.Fprintln(w, "\ndelay: event time from the case being known to the rule's first alert on one of its nodes (negative: the alert came first)")
}

// hours writes a delay in hours as a signed span ("-1d4h", "35m").
func hours(h *float64) string {
	if h == nil {
		return "-"
	}
	d := time.Duration(*h * float64(time.Hour)).Round(time.Minute)
	sign := ""
	if d < 0 {
		sign, d = "-", -d
	}
	days := d / (24 * time.Hour)
	d -= days * 24 * time.Hour
	s := strings.TrimSuffix(d.String(), "0s")
	if days > 0 {
		s = fmt.Sprintf("%dd%s", days, strings.TrimSuffix(s, "0m"))
	}
	if s == "" {
		s = "0m"
	}
	return sign + s
}

// readCases reads labelled cases: a CSV file with a header naming the
// columns node and known_at (a time in any form stream.ParseTime reads)
// and optionally case (rows of one case share it). A bad row is reported
// with its line and left out; the rest are read.
func readCases(path string) ([]alert.Case, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("--labels: %w", err)
	}
	defer f.Close()
	cr := csv.NewReader(f)
	cr.FieldsPerRecord = -1
	cr.ReuseRecord = true
	head, err := cr.Read()
	if err != nil {
		return nil, badInput(fmt.Errorf("--labels %s: line 1: %w", path, err))
	}
	col := map[string]int{}
	for i, h := range head {
		col[strings.ToLower(strings.TrimSpace(h))] = i
	}
	ni, ok1 := col["node"]
	ti, ok2 := col["known_at"]
	ci, hasCase := col["case"]
	if !ok1 || !ok2 {
		return nil, badInput(fmt.Errorf("--labels %s: line 1: want columns node and known_at (and optionally case), found %s", path, strings.Join(head, ", ")))
	}
	var out []alert.Case
	bad := 0
	for {
		rec, err := cr.Read()
		if errors.Is(err, io.EOF) {
			break
		}
		line, _ := cr.FieldPos(0)
		if err == nil && len(rec) != len(head) {
			err = fmt.Errorf("%d fields, the header has %d", len(rec), len(head))
		}
		var c alert.Case
		if err == nil {
			c.Node = rec[ni]
			if c.Node == "" {
				err = errors.New("empty node")
			}
		}
		if err == nil {
			if c.Known, err = stream.ParseTime(rec[ti]); err != nil {
				err = fmt.Errorf("known_at: %w", err)
			}
		}
		if err != nil {
			var pe *csv.ParseError
			if errors.As(err, &pe) {
				line = pe.Line
			}
			fmt.Fprintf(os.Stderr, "orbitwatch alerts: --labels %s: line %d left out: %v\n", path, line, err)
			bad++
			if pe != nil && pe.Err != csv.ErrFieldCount {
				return nil, badInput(fmt.Errorf("--labels %s: line %d: %w", path, line, err))
			}
			continue
		}
		if hasCase {
			c.ID = rec[ci]
		}
		out = append(out, c)
	}
	if bad > 0 {
		fmt.Fprintf(os.Stderr, "orbitwatch alerts: %d cases read from %s, %d lines left out\n", len(out), path, bad)
	}
	return out, nil
}
