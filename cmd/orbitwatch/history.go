package main

import (
	"bufio"
	"bytes"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"text/tabwriter"
	"time"

	"orbitwatch/bench/plot"
	"orbitwatch/delta"
	"orbitwatch/delta/catalog"
	"orbitwatch/shard"
	"orbitwatch/storage"
)

func init() {
	commands["history"] = command{"list (and plot) one node's orbit vector at the cuts in an event-time range where its own record changed", runHistory}
}

// plotOrbits is how many orbits a history plot shows by default.
const plotOrbits = 6

func runHistory(args []string) int {
	c := newReadCommand("history", false)
	node := c.fs.String("node", "", "`ID` of the node to read")
	var rng timeRange
	c.fs.Var(&rng.from, "from", "first event time: checkpoints whose watermark is ≥ `TIME`: "+timeForms)
	c.fs.Var(&rng.to, "to", "last event time: checkpoints whose watermark is ≤ `TIME`")
	asCSV := c.fs.Bool("csv", false, "write CSV (header seq,event_time,<orbit ids>) instead of a table")
	plotFile := c.fs.String("plot", "", "also draw a log-scale line chart of the largest orbits to `FILE`.svg or FILE.png")
	orbitList := c.fs.String("orbits", "", "comma-separated orbit `IDS` to list and plot (default: all listed, the 6 largest at the end plotted)")
	ext := ""
	checkRange := rng.check
	checkPlot := func() error {
		ext = strings.ToLower(filepath.Ext(*plotFile))
		if *plotFile != "" && ext != ".svg" && ext != ".png" {
			return fmt.Errorf("--plot %s: the file name must end in .svg or .png", *plotFile)
		}
		return nil
	}
	if code := c.parse(args, c.required("node"), checkRange, checkPlot); code != 0 {
		return code
	}
	st, _, err := c.open()
	if err != nil {
		return fail("history", err)
	}
	defer st.Close()
	set := st.Settings()
	var chosen []int
	if *orbitList != "" {
		if chosen, err = parseOrbits(*orbitList, set.NumOrbits); err != nil {
			return c.usage(err)
		}
	}
	counting, err := shard.NewCounting(set.Kind, set.MaxNodes)
	if err != nil {
		return fail("history", err)
	}
	cat := counting.Catalog
	vers, err := nodeHistory(st, counting.New(), *node, rng)
	if err != nil {
		return fail("history", err)
	}
	listed := chosen
	if listed == nil {
		listed = make([]int, set.NumOrbits)
		for i := range listed {
			listed[i] = i
		}
	}
	// The chart is drawn in memory first so that a failure leaves no file.
	var chart bytes.Buffer
	if *plotFile != "" {
		plotted := chosen
		if plotted == nil {
			plotted = largestOrbits(vers, plotOrbits)
		}
		if err := drawHistory(&chart, ext, cat, *node, vers, plotted); err != nil {
			return fail("history", err)
		}
	}
	w := bufio.NewWriter(os.Stdout)
	if *asCSV {
		err = writeHistoryCSV(w, vers, listed)
	} else {
		err = writeHistoryTable(w, vers, listed)
	}
	if err == nil {
		err = w.Flush()
	}
	if err != nil {
		return fail("history", err)
	}
	if *plotFile != "" {
		if err := writeFileAtomic(*plotFile, chart.Bytes()); err != nil {
			return fail("history", err)
		}
	}
	return 0
}

// timeRange is an event-time interval, each end optional. A checkpoint
// carrying no event time has the smallest watermark: it is before every
// --from and within every --to.
type timeRange struct {
	from, to timeFlag
}

// parse sets the ends given (empty: open) and checks the range.
func (r *timeRange) parse(from, to string) error {
	if from != "" {
		if err := r.from.Set(from); err != nil {
			return fmt.Errorf("--from: %w", err)
		}
	}
	if to != "" {
		if err := r.to.Set(to); err != nil {
			return fmt.Errorf("--to: %w", err)
		}
	}
	return r.check()
}

// check refuses a range whose end is before its start.
func (r *timeRange) check() error {
	if r.from.set && r.to.set && r.to.t.Before(r.from.t) {
		return fmt.Errorf("--to %s is before --from %s", r.to.text, r.from.text)
	}
	return nil
}

// contains reports whether a checkpoint watermark lies in the range.
func (r *timeRange) contains(wm time.Time) bool {
	if r.from.set && (wm.IsZero() || wm.Before(r.from.t)) {
		return false
	}
	return !r.to.set || wm.IsZero() || !wm.After(r.to.t)
}

// nodeHistory returns node's vector, derived by c from the stored records,
// at every checkpoint whose watermark is in rng where the node's own record
// changed, and at the last one (see shard.History). Watermarks never
// decrease along the checkpoints, so those form one run of sequences.
func nodeHistory(st *storage.Store, c delta.Counter, node string, rng timeRange) ([]shard.Version, error) {
	var lo, hi uint64
	found := false
	for _, c := range st.Checkpoints() {
		if rng.contains(c.Watermark) {
			if !found {
				lo, found = c.Seq, true
			}
			hi = c.Seq
		}
	}
	if !found {
		return nil, errors.New("no checkpoint has an event time in the range")
	}
	vers, err := shard.History(st, c, node, lo, hi, math.MaxInt)
	if errors.Is(err, storage.ErrUnknownNode) {
		return nil, fmt.Errorf("node %q is not in the data directory", node)
	}
	if err != nil {
		return nil, err
	}
	if len(vers) == 0 {
		return nil, fmt.Errorf("node %q does not exist yet at any checkpoint in the range (seq %d to %d)", node, lo, hi)
	}
	return vers, nil
}

// parseOrbits reads a comma-separated list of distinct orbit ids below n.
func parseOrbits(s string, n int) ([]int, error) {
	var out []int
	seen := map[int]bool{}
	for _, f := range strings.Split(s, ",") {
		o, err := strconv.Atoi(strings.TrimSpace(f))
		if err != nil || o < 0 || o >= n {
			return nil, fmt.Errorf("--orbits: %q is not an orbit id 0..%d", f, n-1)
		}
		if seen[o] {
			return nil, fmt.Errorf("--orbits: orbit %d given twice", o)
		}
		seen[o] = true
		out = append(out, o)
	}
	return out, nil
}

// largestOrbits returns the k orbits with the largest counts at the last
// version (ties to the lower id), leaving out orbits that are zero at every
// version unless nothing else is left; the result is in id order.
func largestOrbits(vers []shard.Version, k int) []int {
	final := vers[len(vers)-1].Vector
	ever := make([]bool, len(final))
	for _, v := range vers {
		for o, c := range v.Vector {
			ever[o] = ever[o] || c > 0
		}
	}
	var ids []int
	for o := range final {
		if ever[o] {
			ids = append(ids, o)
		}
	}
	if len(ids) == 0 {
		return []int{0}
	}
	sort.SliceStable(ids, func(i, j int) bool { return final[ids[i]] > final[ids[j]] })
	ids = ids[:min(k, len(ids))]
	sort.Ints(ids)
	return ids
}

// drawHistory draws the plotted orbits over event time, or over seq when a
// checkpoint in the history carries no event time, on a log y axis.
func drawHistory(w io.Writer, ext string, cat *catalog.Catalog, node string, vers []shard.Version, plotted []int) error {
	series := make([]plot.Series, len(plotted))
	for i, o := range plotted {
		y := make([]float64, len(vers))
		for j, v := range vers {
			y[j] = float64(v.Vector[o])
		}
		// A count holds from one cut to the next: steps, not slopes.
		series[i] = plot.Series{Name: fmt.Sprintf("%d %s", o, cat.Orbits[o].Name), Y: y, Step: true}
	}
	timed := true
	for _, v := range vers {
		timed = timed && !v.Watermark.IsZero()
	}
	if timed {
		x := make([]time.Time, len(vers))
		for j, v := range vers {
			x[j] = v.Watermark
		}
		title := fmt.Sprintf("node %s: orbit counts by event time", strconv.Quote(node))
		if ext == ".png" {
			return plot.LineChartPNG(w, title, x, series, true)
		}
		return plot.LineChartSVG(w, title, x, series, true)
	}
	x := make([]float64, len(vers))
	for j, v := range vers {
		x[j] = float64(v.Seq)
	}
	title := fmt.Sprintf("node %s: orbit counts by log position (seq)", strconv.Quote(node))
	if ext == ".png" {
		return plot.LineChartPNG(w, title, x, series, true)
	}
	return plot.LineChartSVG(w, title, x, series, true)
}

// writeHistoryCSV writes header seq,event_time,<ids>, then one row per
// version; event_time is RFC 3339 with nanoseconds, empty without a time.
func writeHistoryCSV(w io.Writer, vers []shard.Version, orbits []int) error {
	cw := csv.NewWriter(w)
	rec := make([]string, len(orbits)+2)
	rec[0], rec[1] = "seq", "event_time"
	for i, o := range orbits {
		rec[i+2] = strconv.Itoa(o)
	}
	cw.Write(rec)
	for _, v := range vers {
		rec[0] = strconv.FormatUint(v.Seq, 10)
		rec[1] = formatEventTime(eventTime(v.Watermark), "")
		for i, o := range orbits {
			rec[i+2] = strconv.FormatUint(v.Vector[o], 10)
		}
		cw.Write(rec)
	}
	cw.Flush()
	return cw.Error()
}

// writeHistoryTable writes the versions as aligned columns: seq, event time
// ("-" without one), then the listed orbits.
func writeHistoryTable(w io.Writer, vers []shard.Version, orbits []int) error {
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
	var b strings.Builder
	b.WriteString("seq\tevent time\t")
	for _, o := range orbits {
		fmt.Fprintf(&b, "%d\t", o)
	}
	fmt.Fprintln(tw, b.String())
	for _, v := range vers {
		b.Reset()
		fmt.Fprintf(&b, "%d\t%s\t", v.Seq, formatEventTime(eventTime(v.Watermark), "-"))
		for _, o := range orbits {
			fmt.Fprintf(&b, "%d\t", v.Vector[o])
		}
		fmt.Fprintln(tw, b.String())
	}
	return tw.Flush()
}

// writeFileAtomic writes data to path through a temporary file in the same
// directory renamed into place, so path never holds a partial file.
func writeFileAtomic(path string, data []byte) error {
	return createAtomic(path, func(w io.Writer) error {
		_, err := w.Write(data)
		return err
	})
}

// createAtomic writes path with fill through a temporary file in the same
// directory, renamed into place only when fill and the close succeed.
func createAtomic(path string, fill func(w io.Writer) error) error {
	f, err := os.CreateTemp(filepath.Dir(path), "."+filepath.Base(path)+".*")
	if err != nil {
		return err
	}
	tmp := f.Name()
	err = f.Chmod(0o644)
	bw := bufio.NewWriterSize(f, 1<<16)
	if err == nil {
		err = fill(bw)
	}
	if err == nil {
		err = bw.Flush()
	}
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	if err == nil {
		err = os.Rename(tmp, path)
	}
	if err != nil {
		os.Remove(tmp)
		return err
	}
	return nil
}
