// Command backfillbench measures orbitwatch backfill end to end (decode →
// counting → cuts → alert rules → Badger) on generated edge logs against
// networkx.triangles on each log's final graph, in one run: the orbitwatch
// binary is built from this tree and run as a child process with its
// default settings (the built-in alert rules evaluated at every hourly
// cut) and with --no-alerts, and a Python script times the networkx call
// alone on the same edges. Rounds alternate the three, so that every ratio
// compares runs that shared the machine at about the same time; the
// machine's load average is printed beside each round.
//
//	go run ./bench/cmd/backfillbench
//	go run ./bench/cmd/backfillbench -graphs ba:50000:1,ba:200000:2,ba:800000:1,payments:100000:1 -rounds 1
//	go run ./bench/cmd/backfillbench -merchant 0.2
//
// A graph is shape:nodes:seed: ba (Barabási–Albert, -m edges per new
// node), uniform (a uniform random graph, -m edges per node, no hubs) or
// payments (the scenario's households, shops and payroll providers); its
// log adds every edge, one second of event time apart (for ba and
// payments the log bench/cmd/orbitgen writes with the same arguments). With
// -merchant, each ba graph is measured also with one merchant paid by that
// share of extra payments, appended after the graph's own adds, and the
// table compares the cost per event with and without it. networkx is not
// timed on a graph with a node of degree above 10,000 (the merchant's, the
// payroll providers'): its triangles builds the set of a node's neighbours
// for every neighbour it visits, d² steps for a hub of degree d.
package main

import (
	"bytes"
	"errors"
	"flag"
	"fmt"
	"io"
	"io/fs"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"syscall"
	"time"

	"orbitwatch/bench"
	"orbitwatch/bench/gen"
)

func main() {
	if err := run(os.Args[1:], os.Stdout, os.Stderr); err != nil {
		fmt.Fprintln(os.Stderr, "backfillbench:", err)
		os.Exit(1)
	}
}

// graph is one log to measure.
type graph struct {
	name      string
	shape     string
	nodes     int
	seed      uint64
	merchant  bool // with the extra payments to one merchant
	edges     []gen.Edge
	log       string
	customers int // the merchant's
}

func run(args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("backfillbench", flag.ContinueOnError)
	fs.SetOutput(stderr)
	graphs := fs.String("graphs", "ba:200000:1", "comma-separated shape:nodes:seed (shape ba, uniform or payments)")
	m := fs.Int("m", 5, "Barabási–Albert edges per new node")
	rounds := fs.Int("rounds", 2, "rounds of the three measurements per graph")
	merchant := fs.Float64("merchant", 0, "also measure each ba graph plus one merchant paid by this share of extra payments (0: no)")
	modes := fs.String("modes", "default,no-alerts", "backfill settings to time: default, no-alerts (comma-separated)")
	noNetworkx := fs.Bool("no-networkx", false, "do not time networkx.triangles")
	extra := fs.String("backfill-args", "", "more backfill flags for every run, space-separated (e.g. \"--cut-every 10m\")")
	keep := fs.Bool("keep", false, "keep the work directory")
	if err := fs.Parse(args); err != nil {
		return err
	}
	if fs.NArg() > 0 {
		return fmt.Errorf("unexpected arguments %q", fs.Args())
	}
	if *rounds < 1 || *m < 1 || *merchant < 0 || *merchant > 1 {
		return errors.New("-rounds and -m must be at least 1, -merchant a share in [0, 1]")
	}
	var runModes []string
	for _, md := range strings.Split(*modes, ",") {
		if md != "default" && md != "no-alerts" {
			return fmt.Errorf("-modes %q: %q is neither default nor no-alerts", *modes, md)
		}
		runModes = append(runModes, md)
	}
	specs, err := parseGraphs(*graphs, *m, *merchant)
	if err != nil {
		return err
	}
	python := ""
	if !*noNetworkx {
		if python, err = bench.Python(); err != nil {
			return err
		}
	}
	work, err := os.MkdirTemp("", "backfillbench-")
	if err != nil {
		return err
	}
	if !*keep {
		defer os.RemoveAll(work)
	}
	bin, err := bench.BuildBinary(work, stderr)
	if err != nil {
		return err
	}
	for i := range specs {
		g := &specs[i]
		if err := g.generate(work, *m, *merchant); err != nil {
			return err
		}
		fmt.Fprintf(stderr, "backfillbench: %s: %d events in %s\n", g.name, len(g.edges), g.log)
	}

	var results []result
	for r := 1; r <= *rounds; r++ {
		for i := range specs {
			g := &specs[i]
			res := result{graph: g, round: r, load: bench.LoadAverage(), runs: map[string]backfillRun{}}
			for _, md := range runModes {
				fmt.Fprintf(stderr, "backfillbench: round %d, %s, backfill %s\n", r, g.name, md)
				flags := strings.Fields(*extra)
				if md == "no-alerts" {
					flags = append(flags, "--no-alerts")
				}
				br, err := backfill(bin, filepath.Join(work, fmt.Sprintf("data-%d-%d-%s", r, i, md)), g.log, flags)
				if err != nil {
					return fmt.Errorf("%s: %w", g.name, err)
				}
				res.runs[md] = br
				fmt.Fprintf(stderr, "backfillbench: %.1f s wall, %.1f s CPU, %s cuts, %s records, %s alerts\n", br.wall.Seconds(), br.cpu.Seconds(), count(br.cuts), count(br.records), count(br.alerts))
			}
			if python != "" {
				fmt.Fprintf(stderr, "backfillbench: round %d, %s, networkx.triangles\n", r, g.name)
				if res.nx, err = bench.TimeNetworkxTriangles(python, g.edges); err != nil {
					return err
				}
				fmt.Fprintf(stderr, "backfillbench: %.1f s wall, %.1f s CPU (skipped: %v)\n", res.nx.Wall.Seconds(), res.nx.CPU.Seconds(), res.nx.Skipped)
			}
			results = append(results, res)
		}
	}
	fmt.Fprintf(stdout, "```\ngo run ./bench/cmd/backfillbench %s\n```\n\n", strings.Join(args, " "))
	writeRuns(stdout, results, runModes, python != "")
	if python != "" {
		writeRatios(stdout, specs, results, runModes)
	}
	if *merchant > 0 {
		writeMerchant(stdout, specs, results, runModes, *merchant)
	}
	return nil
}

// parseGraphs reads the -graphs list; with a merchant share each ba graph
// is followed by its merchant variant.
func parseGraphs(list string, m int, merchant float64) ([]graph, error) {
	var out []graph
	for _, f := range strings.Split(list, ",") {
		parts := strings.Split(strings.TrimSpace(f), ":")
		if len(parts) != 3 {
			return nil, fmt.Errorf("-graphs: %q is not shape:nodes:seed", f)
		}
		n, err1 := strconv.Atoi(parts[1])
		seed, err2 := strconv.ParseUint(parts[2], 10, 64)
		if err := errors.Join(err1, err2); err != nil {
			return nil, fmt.Errorf("-graphs: %q: %w", f, err)
		}
		g := graph{shape: parts[0], nodes: n, seed: seed}
		switch {
		case g.shape == "ba" && n > m:
			g.name = fmt.Sprintf("BA(%s, %d) seed %d", size(n), m, seed)
		case g.shape == "uniform" && n > 2*m+1:
			g.name = fmt.Sprintf("uniform(%s, %d) seed %d", size(n), m, seed)
		case g.shape == "payments" && n >= 40:
			g.name = fmt.Sprintf("payments(%s households) seed %d", size(n), seed)
		default:
			return nil, fmt.Errorf("-graphs: %q: want ba with nodes above -m, uniform with nodes above 2·-m+1, or payments with at least 40 households", f)
		}
		out = append(out, g)
		if merchant > 0 && g.shape == "ba" {
			g.merchant, g.name = true, g.name+" + merchant"
			out = append(out, g)
		}
	}
	return out, nil
}

func size(n int) string {
	if n%1000 == 0 {
		return fmt.Sprintf("%dk", n/1000)
	}
	return strconv.Itoa(n)
}

// generate makes the graph's edges and writes its log as orbitgen does.
func (g *graph) generate(dir string, m int, merchant float64) error {
	var name gen.Namer
	switch g.shape {
	case "ba":
		g.edges = gen.BarabasiAlbert(g.nodes, m, g.seed)
		name = bench.AccountNamer(0)
		if g.merchant {
			before := len(g.edges)
			g.edges = gen.WithMerchant(g.edges, g.nodes, merchant, g.seed+6)
			g.customers = len(g.edges) - before
			name = bench.AccountNamer(g.nodes)
		}
	case "uniform":
		g.edges = gen.Uniform(g.nodes, m, g.seed)
		name = bench.AccountNamer(0)
	case "payments":
		var pop gen.Population
		pop, g.edges = gen.Payments(gen.DefaultPayments(g.nodes), g.seed)
		name = pop.AppendName
	}
	g.log = filepath.Join(dir, strings.NewReplacer(" ", "", "(", "-", ")", "", ",", "-", "+", "-").Replace(g.name)+".csv")
	f, err := os.Create(g.log)
	if err != nil {
		return err
	}
	w := gen.NewLogWriter(f, name)
	for _, e := range gen.Grow(g.edges, time.Date(2026, 1, 1, 0, 0, 0, 0, time.UTC).Unix()) {
		if err := w.Write(e); err != nil {
			f.Close()
			return err
		}
	}
	return errors.Join(w.Flush(), f.Close())
}

// backfillRun is one backfill child process.
type backfillRun struct {
	wall, cpu time.Duration
	rss, disk int64
	// summary figures of the backfill's last line; -1 when not found
	cuts, records, alerts, commits int64
	storeBusy                      float64
}

var summary = regexp.MustCompile(`this run wrote (\d+) cuts \((\d+) records, (\d+) alerts\) in (\d+) commits taking ([\d.]+) s`)

func backfill(bin, data, log string, flags []string) (backfillRun, error) {
	cmd := exec.Command(bin, append([]string{"backfill", "--data", data, "--input", log}, flags...)...)
	bench.DieWithParent(cmd)
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	start := time.Now()
	if err := cmd.Run(); err != nil {
		return backfillRun{}, fmt.Errorf("%v: %v\n%s", cmd.Args, err, stderr.String())
	}
	r := backfillRun{wall: time.Since(start)}
	ru := cmd.ProcessState.SysUsage().(*syscall.Rusage)
	r.cpu = time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
	r.rss = ru.Maxrss * 1024
	r.disk = du(data)
	r.cuts, r.records, r.alerts, r.commits, r.storeBusy = -1, -1, -1, -1, -1
	if sm := summary.FindStringSubmatch(stderr.String()); sm != nil {
		atoi := func(s string) int64 { n, _ := strconv.ParseInt(s, 10, 64); return n }
		r.cuts, r.records, r.alerts, r.commits = atoi(sm[1]), atoi(sm[2]), atoi(sm[3]), atoi(sm[4])
		r.storeBusy, _ = strconv.ParseFloat(sm[5], 64)
	}
	os.RemoveAll(data)
	return r, nil
}

func du(dir string) int64 {
	var n int64
	filepath.WalkDir(dir, func(_ string, d fs.DirEntry, err error) error {
		if err == nil && !d.IsDir() {
			if fi, err := d.Info(); err == nil {
				n += fi.Size()
			}
		}
		return nil
	})
	return n
}

// result is one round of one graph.
type result struct {
	graph *graph
	round int
	load  string
	runs  map[string]backfillRun
	nx    bench.NetworkxRun
}

func secs(d time.Duration) string { return fmt.Sprintf("%.1f", d.Seconds()) }

func flagOf(mode string) string {
	if mode == "no-alerts" {
		return "--no-alerts"
	}
	return "default"
}

func writeRuns(w io.Writer, results []result, modes []string, nx bool) {
	fmt.Fprintln(w, "Each run: wall seconds (CPU seconds, all threads, in brackets); backfill as a child process from the first line read to the last commit; networkx.triangles the call alone.")
	fmt.Fprintln(w)
	fmt.Fprint(w, "| graph | events | round | load | ")
	for _, md := range modes {
		fmt.Fprintf(w, "backfill %s s | ", flagOf(md))
	}
	if nx {
		fmt.Fprint(w, "networkx s | ")
		for _, md := range modes {
			fmt.Fprintf(w, "%s / networkx | ", flagOf(md))
		}
	}
	fmt.Fprintln(w, "cuts | records | alerts | peak RSS MiB | disk MiB |")
	fmt.Fprintf(w, "| --- |%s\n", strings.Repeat(" ---: |", 3+len(modes)+5+map[bool]int{true: 1 + len(modes)}[nx]))
	for _, r := range results {
		g := r.graph
		fmt.Fprintf(w, "| %s | %d | %d | %s |", g.name, len(g.edges), r.round, r.load)
		for _, md := range modes {
			br := r.runs[md]
			fmt.Fprintf(w, " %s (%s) |", secs(br.wall), secs(br.cpu))
		}
		if nx && r.nx.Wall == 0 {
			fmt.Fprint(w, strings.Repeat(" – |", 1+len(modes)))
		} else if nx {
			fmt.Fprintf(w, " %s (%s) |", secs(r.nx.Wall), secs(r.nx.CPU))
			for _, md := range modes {
				br := r.runs[md]
				fmt.Fprintf(w, " %.2f× (%.2f×) |", br.wall.Seconds()/r.nx.Wall.Seconds(), br.cpu.Seconds()/r.nx.CPU.Seconds())
			}
		}
		first := r.runs[modes[0]]
		fmt.Fprintf(w, " %s | %s | %s | %.0f | %.0f |\n", count(first.cuts), count(first.records), count(first.alerts),
			float64(first.rss)/(1<<20), float64(first.disk)/(1<<20))
	}
	fmt.Fprintf(w, "\ncuts, records, alerts, peak RSS and disk are those of the %s run; networkx is not timed (–) on a graph with a node of degree above %d.\n\n", flagOf(modes[0]), bench.NetworkxMaxDegree)
}

func count(n int64) string {
	if n < 0 {
		return "?"
	}
	return strconv.FormatInt(n, 10)
}

// writeRatios sums every graph's rounds: the ratio of backfill to
// networkx over the rounds, and the spread of the rounds' ratios.
func writeRatios(w io.Writer, specs []graph, results []result, modes []string) {
	fmt.Fprintln(w, "Backfill over networkx.triangles, wall time (CPU time in brackets): the mean over the rounds, and the rounds' lowest–highest.")
	fmt.Fprintln(w)
	fmt.Fprint(w, "| graph | events | events/s (", flagOf(modes[0]), ") |")
	for _, md := range modes {
		fmt.Fprintf(w, " %s / networkx |", flagOf(md))
	}
	fmt.Fprintf(w, "\n| --- | ---: | ---: |%s\n", strings.Repeat(" ---: |", len(modes)))
	for i := range specs {
		g := &specs[i]
		var mine []result
		for _, r := range results {
			if r.graph == g {
				mine = append(mine, r)
			}
		}
		if mine[0].nx.Wall == 0 {
			continue
		}
		var wall time.Duration
		for _, r := range mine {
			wall += r.runs[modes[0]].wall
		}
		fmt.Fprintf(w, "| %s | %d | %.0f |", g.name, len(g.edges), float64(len(g.edges)*len(mine))/wall.Seconds())
		for _, md := range modes {
			var ws, cs []float64
			var bw, bc, nw, nc float64
			for _, r := range mine {
				br := r.runs[md]
				ws = append(ws, br.wall.Seconds()/r.nx.Wall.Seconds())
				cs = append(cs, br.cpu.Seconds()/r.nx.CPU.Seconds())
				bw, bc, nw, nc = bw+br.wall.Seconds(), bc+br.cpu.Seconds(), nw+r.nx.Wall.Seconds(), nc+r.nx.CPU.Seconds()
			}
			fmt.Fprintf(w, " %.2f× (%.2f×), %s |", bw/nw, bc/nc, spread(ws, cs))
		}
		fmt.Fprintln(w)
	}
	fmt.Fprintln(w)
}

func spread(ws, cs []float64) string {
	return fmt.Sprintf("%.2f–%.2f (%.2f–%.2f)", slices.Min(ws), slices.Max(ws), slices.Min(cs), slices.Max(cs))
}

// writeMerchant compares each merchant graph's cost per event with its
// plain graph's, round by round.
func writeMerchant(w io.Writer, specs []graph, results []result, modes []string, share float64) {
	fmt.Fprintf(w, "One merchant paid by %.0f%% extra payments, appended after the graph's own adds: cost per event (µs of wall time, CPU in brackets) against the graph without it, in the same rounds; and per payment to the merchant (the time the graph with it took beyond the plain graph's, over the payments).\n\n", 100*share)
	fmt.Fprint(w, "| graph | customers | events |")
	for _, md := range modes {
		fmt.Fprintf(w, " %s µs/event | merchant / plain, rounds lowest–highest | µs/payment to the merchant (× plain µs/event) |", flagOf(md))
	}
	fmt.Fprintf(w, "\n| --- | ---: | ---: |%s\n", strings.Repeat(" ---: | ---: | ---: |", len(modes)))
	for i := range specs {
		g := &specs[i]
		if !g.merchant {
			continue
		}
		plain := &specs[i-1]
		fmt.Fprintf(w, "| %s | – | %d |", plain.name, len(plain.edges))
		perEvent := func(gr *graph, md string) (wall, cpu []float64) {
			for _, r := range results {
				if r.graph == gr {
					br := r.runs[md]
					wall = append(wall, br.wall.Seconds()*1e6/float64(len(gr.edges)))
					cpu = append(cpu, br.cpu.Seconds()*1e6/float64(len(gr.edges)))
				}
			}
			return wall, cpu
		}
		for _, md := range modes {
			pw, pc := perEvent(plain, md)
			fmt.Fprintf(w, " %.1f (%.1f) | | |", mean(pw), mean(pc))
		}
		fmt.Fprintf(w, "\n| %s | %d | %d |", g.name, g.customers, len(g.edges))
		for _, md := range modes {
			pw, pc := perEvent(plain, md)
			hw, hc := perEvent(g, md)
			var rw, rc []float64
			for k := range hw {
				rw, rc = append(rw, hw[k]/pw[k]), append(rc, hc[k]/pc[k])
			}
			// The extra time over the extra events: µs/event × events
			// is the run's time.
			np, nh := float64(len(plain.edges)), float64(len(g.edges))
			mw, mc := (mean(hw)*nh-mean(pw)*np)/(nh-np), (mean(hc)*nh-mean(pc)*np)/(nh-np)
			fmt.Fprintf(w, " %.1f (%.1f) | %.2f× (%.2f×), %s | %.0f (%.1f×) (%.0f (%.1f×)) |", mean(hw), mean(hc), mean(hw)/mean(pw), mean(hc)/mean(pc), spread(rw, rc),
				mw, mw/mean(pw), mc, mc/mean(pc))
		}
		fmt.Fprintln(w)
	}
	fmt.Fprintln(w)
}

func mean(xs []float64) float64 {
	s := 0.0
	for _, x := range xs {
		s += x
	}
	return s / float64(len(xs))
}
