package main

import (
	"bytes"
	"cmp"
	"encoding/csv"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"text/tabwriter"
	"time"

	"orbitwatch/bench/plot"
	"orbitwatch/shard"
	"orbitwatch/shard/api"
	"orbitwatch/storage"
	"orbitwatch/stream"
)

func init() {
	commands["drift"] = command{"compare the whole network at two checkpoints, or over a series of them, by graphlet correlation distance (GCD-11)", runDrift}
	usages["drift"] = usageInfo{"orbitwatch drift --data DATA --from 2026-03-01 --to 2026-04-01", []string{"data"}}
}

// driftFlags are drift's flags.
type driftFlags struct {
	from, to       string
	fromSeq, toSeq uint64
	every          time.Duration
	asJSON, asCSV  bool
	plotFile       string
}

func runDrift(args []string) int {
	c := newReadCommand("drift", false)
	var f driftFlags
	c.fs.StringVar(&f.from, "from", "", "compare from the latest checkpoint whose event-time watermark is ≤ `TIME` (default: the first checkpoint)")
	c.fs.StringVar(&f.to, "to", "", "compare to the latest checkpoint whose event-time watermark is ≤ `TIME` (default: the last checkpoint)")
	c.fs.Uint64Var(&f.fromSeq, "from-seq", 0, "compare from the latest checkpoint at or before log position `N`")
	c.fs.Uint64Var(&f.toSeq, "to-seq", 0, "compare to the latest checkpoint at or before log position `N`")
	c.fs.Func("every", "a series: GCD-11 at every `SPAN` of event time (e.g. 1d, 6h) from --from to --to", func(s string) error {
		d, err := stream.ParseSpan(s)
		f.every = d
		return err
	})
	c.fs.BoolVar(&f.asJSON, "json", false, "print one JSON object (the API's drift body, or the series body with --every)")
	c.fs.BoolVar(&f.asCSV, "csv", false, "with --every: print the series as CSV")
	c.fs.StringVar(&f.plotFile, "plot", "", "with --every: also draw the series as a line chart to `FILE`.svg or FILE.png")
	if code := c.parse(args, f.check); code != 0 {
		return code
	}
	st, err := openData(c.dir)
	if err != nil {
		return fail("drift", err)
	}
	defer st.Close()
	set := st.Settings()
	counting, err := shard.NewCounting(set.Kind, set.MaxNodes)
	if err != nil {
		return fail("drift", err)
	}
	if err := shard.CheckGCD11(counting.Catalog); err != nil {
		return fail("drift", err)
	}
	if f.every > 0 {
		err = driftSeries(st, counting, f)
	} else {
		err = driftPair(st, counting, f)
	}
	if err != nil {
		return fail("drift", err)
	}
	return 0
}

func (f *driftFlags) check() error {
	switch {
	case f.from != "" && f.fromSeq > 0:
		return errors.New("give --from or --from-seq, not both")
	case f.to != "" && f.toSeq > 0:
		return errors.New("give --to or --to-seq, not both")
	case f.every > 0 && (f.fromSeq > 0 || f.toSeq > 0):
		return errors.New("a series (--every) steps in event time: give --from and --to, not --from-seq or --to-seq")
	case f.every == 0 && (f.asCSV || f.plotFile != ""):
		return errors.New("--csv and --plot draw a series: give --every too")
	case f.asCSV && f.asJSON:
		return errors.New("give --json or --csv, not both")
	}
	if ext := strings.ToLower(filepath.Ext(f.plotFile)); f.plotFile != "" && ext != ".svg" && ext != ".png" {
		return fmt.Errorf("--plot %s: the file name must end in .svg or .png", f.plotFile)
	}
	for _, t := range []struct{ flag, v string }{{"from", f.from}, {"to", f.to}} {
		if t.v == "" {
			continue
		}
		if _, err := stream.ParseTime(t.v); err != nil {
			return fmt.Errorf("--%s: %w", t.flag, err)
		}
	}
	return nil
}

// cutSeq resolves --NAME TIME or --NAME-seq N to the sequence of a stored
// checkpoint; def without either.
func cutSeq(st *storage.Store, name, at string, seq, def uint64) (uint64, error) {
	if at != "" {
		t, _ := stream.ParseTime(at) // checked by driftFlags.check
		s, status, msg := shard.CutFor(st, t, 0)
		if status != 200 {
			return 0, fmt.Errorf("--%s: %s", name, msg)
		}
		return s, nil
	}
	if seq == 0 {
		return def, nil
	}
	if _, err := shard.CheckpointAt(st, seq); err != nil {
		_, msg := shard.StoredError(st, seq, err)
		return 0, fmt.Errorf("--%s-seq: %s", name, msg)
	}
	return seq, nil
}

func driftPair(st *storage.Store, c *shard.Counting, f driftFlags) error {
	cps := st.Checkpoints()
	from, err := cutSeq(st, "from", f.from, f.fromSeq, cps[0].Seq)
	if err != nil {
		return err
	}
	to, err := cutSeq(st, "to", f.to, f.toSeq, cps[len(cps)-1].Seq)
	if err != nil {
		return err
	}
	d, err := shard.DriftAt(st, c, from, to)
	if err != nil {
		return err
	}
	out := api.NewDriftJSON(d, c.Catalog)
	if f.asJSON {
		return writeJSONLine(os.Stdout, out)
	}
	return writeDriftTable(os.Stdout, out)
}

func writeJSONLine(w io.Writer, v any) error {
	b, err := json.Marshal(v)
	if err != nil {
		return err
	}
	_, err = w.Write(append(b, '\n'))
	return err
}

// writeDriftTable prints GCD-11 between the two checkpoints, the orbit
// pairs whose correlation moved most and every orbit's distribution at
// both, largest Kolmogorov–Smirnov statistic first.
func writeDriftTable(w io.Writer, d api.DriftJSON) error {
	side := func(c api.DriftCut) string {
		return fmt.Sprintf("checkpoint %d (event time %s, %d nodes with an edge)", c.Seq, formatEventTime(c.EventTime, "none"), c.Nodes)
	}
	fmt.Fprintf(w, "GCD-11 from %s\n         to %s: %.6f\n", side(d.From), side(d.To), d.GCD11)
	fmt.Fprintln(w, "(graphlet correlation distance, Yaveroğlu et al. 2014: 0 for networks whose orbit counts correlate alike)")
	for _, c := range []struct {
		what string
		cut  api.DriftCut
	}{{"from", d.From}, {"to", d.To}} {
		if len(c.cut.Constant) > 0 {
			fmt.Fprintf(w, "orbits with one count at every node at the %s checkpoint (correlations taken as 0): %v\n", c.what, c.cut.Constant)
		}
	}
	fmt.Fprintln(w, "\norbit pairs whose Spearman correlation moved most:")
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintln(tw, "orbits\tbefore\tafter\tchange\t")
	for _, p := range d.Pairs {
		fmt.Fprintf(tw, "%d–%d\t%.4f\t%.4f\t%+.4f\t\n", p.Orbits[0], p.Orbits[1], p.Before, p.After, p.After-p.Before)
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	fmt.Fprintln(w, "\nper-orbit counts over the nodes with an edge, before → after (KS: largest gap between the two distributions):")
	shifts := slices.Clone(d.Shifts)
	slices.SortStableFunc(shifts, func(a, b api.Shift) int { return cmp.Compare(b.KS, a.KS) })
	tw = tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "orbit\tKS\tnon-zero\tp50\tp90\tp99\tmax\tname")
	for _, s := range shifts {
		fmt.Fprintf(tw, "%d\t%.4f\t%.1f%% → %.1f%%\t%s\t%s\t%s\t%s\t%s\n", s.Orbit, s.KS, 100*s.Before.NonZero, 100*s.After.NonZero,
			arrow(s.Before.P50, s.After.P50), arrow(s.Before.P90, s.After.P90), arrow(s.Before.P99, s.After.P99), arrow(s.Before.Max, s.After.Max), s.Name)
	}
	return tw.Flush()
}

// arrow writes "a → b", or "a" when they are equal; counts are whole.
func arrow(a, b float64) string {
	if a == b {
		return strconv.FormatFloat(a, 'f', -1, 64)
	}
	return strconv.FormatFloat(a, 'f', -1, 64) + " → " + strconv.FormatFloat(b, 'f', -1, 64)
}

func driftSeries(st *storage.Store, c *shard.Counting, f driftFlags) error {
	cps := st.Checkpoints()
	from, to := cps[0].Watermark, cps[len(cps)-1].Watermark
	if f.from != "" {
		from, _ = stream.ParseTime(f.from)
	}
	if f.to != "" {
		to, _ = stream.ParseTime(f.to)
	}
	if from.IsZero() || to.IsZero() {
		return errors.New("the checkpoints carry no event time: a series needs --from and --to")
	}
	pts, err := shard.DriftSeries(st, c, from, to, f.every)
	if err != nil {
		return err
	}
	out := api.NewDriftSeriesJSON(pts, f.every, c.Catalog)
	if f.plotFile != "" {
		var chart bytes.Buffer
		if err := drawDrift(&chart, strings.ToLower(filepath.Ext(f.plotFile)), out); err != nil {
			return err
		}
		if err := writeFileAtomic(f.plotFile, chart.Bytes()); err != nil {
			return err
		}
	}
	switch {
	case f.asJSON:
		return writeJSONLine(os.Stdout, out)
	case f.asCSV:
		return writeDriftCSV(os.Stdout, out)
	}
	tw := tabwriter.NewWriter(os.Stdout, 0, 0, 2, ' ', 0)
	fmt.Fprintf(tw, "step (every %s)\tcheckpoint\tevent time\tnodes\tGCD-11 from previous\tGCD-11 from first\n", out.Every)
	for _, p := range out.Points {
		fmt.Fprintf(tw, "%s\t%d\t%s\t%d\t%.6f\t%.6f\n", p.At.Format(time.RFC3339), p.Seq, formatEventTime(p.EventTime, "none"), p.Nodes, p.GCD11Previous, p.GCD11First)
	}
	return tw.Flush()
}

// writeDriftCSV writes header at,seq,event_time,nodes,gcd11_previous,
// gcd11_first and one row per step; times RFC 3339 with nanoseconds,
// distances in Go's shortest round-trip form.
func writeDriftCSV(w io.Writer, s api.DriftSeriesJSON) error {
	cw := csv.NewWriter(w)
	cw.Write([]string{"at", "seq", "event_time", "nodes", "gcd11_previous", "gcd11_first"})
	for _, p := range s.Points {
		cw.Write([]string{p.At.Format(time.RFC3339Nano), strconv.FormatUint(p.Seq, 10), formatEventTime(p.EventTime, ""),
			strconv.Itoa(p.Nodes), strconv.FormatFloat(p.GCD11Previous, 'g', -1, 64), strconv.FormatFloat(p.GCD11First, 'g', -1, 64)})
	}
	cw.Flush()
	return cw.Error()
}

// drawDrift draws GCD-11 from the previous step and from the first over
// the steps' event time (linear y: GCD-11 is 0 for no drift).
func drawDrift(w io.Writer, ext string, s api.DriftSeriesJSON) error {
	x := make([]time.Time, len(s.Points))
	prev, first := make([]float64, len(s.Points)), make([]float64, len(s.Points))
	for i, p := range s.Points {
		x[i], prev[i], first[i] = p.At, p.GCD11Previous, p.GCD11First
		if i == 0 {
			prev[i] = math.NaN() // no previous step
		}
	}
	series := []plot.Series{{Name: "GCD-11 from the previous step", Y: prev}, {Name: "GCD-11 from the first step", Y: first}}
	title := fmt.Sprintf("network drift every %s (graphlet correlation distance)", s.Every)
	if ext == ".png" {
		return plot.LineChartPNG(w, title, x, series, false)
	}
	return plot.LineChartSVG(w, title, x, series, false)
}
