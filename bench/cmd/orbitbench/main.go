// Command orbitbench measures every counter once on the benchmark graphs
// (a Barabási–Albert graph and the directed payments graph of bench/gen)
// and prints a Markdown table for the README's performance section: per
// event cost under churn, full recount time, their ratio, and for the
// undirected graph the recount against networkx.triangles. The exact
// command line is printed above the table.
//
//	go run ./bench/cmd/orbitbench -nodes 200000 -m 5 -directed-events 1300000
//	go run ./bench/cmd/orbitbench -nodes 0 -directed-events 0 -scaling 25000,50000,100000,200000 -plot .
//
// With -scaling it also measures the undirected engines' churn cost on
// Barabási–Albert graphs of several sizes, prints it as a second table and,
// with -plot, draws it as scaling.svg and scaling.png.
package main

import (
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"runtime"
	"strings"
	"time"

	"orbitwatch/bench"
	"orbitwatch/delta"
)

func main() {
	if err := run(os.Args[1:], os.Stdout, os.Stderr); err != nil {
		fmt.Fprintln(os.Stderr, "orbitbench:", err)
		os.Exit(1)
	}
}

func run(args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("orbitbench", flag.ContinueOnError)
	fs.SetOutput(stderr)
	nodes := fs.Int("nodes", 200000, "Barabási–Albert nodes (0: no undirected graph)")
	m := fs.Int("m", 5, "Barabási–Albert edges per new node")
	dirEvents := fs.Int("directed-events", 1300000, "events of the directed payments stream (0: no directed graph)")
	events := fs.Int("events", 20000, "churn events measured per counter")
	seed := fs.Uint64("seed", 1, "random seed")
	noPython := fs.Bool("no-networkx", false, "do not time networkx.triangles")
	scale := fs.String("scaling", "", "also measure churn on BA graphs of these node counts (comma-separated)")
	plotDir := fs.String("plot", "", "directory for scaling.svg and scaling.png (with -scaling)")
	limit := fs.Duration("recount-timeout", 10*time.Minute, "longest wait for one recount (shown as a lower bound when passed)")
	if err := fs.Parse(args); err != nil {
		return err
	}
	if fs.NArg() > 0 {
		return fmt.Errorf("unexpected arguments %q", fs.Args())
	}
	if *events < 2 {
		return errors.New("-events must be at least 2")
	}
	if *nodes > 0 && (*m < 1 || *nodes <= *m) {
		return fmt.Errorf("-nodes %d and -m %d: need m >= 1 and nodes > m", *nodes, *m)
	}
	var sizes []int
	if *scale != "" {
		s, err := parseSizes(*scale, *m)
		if err != nil {
			return err
		}
		sizes = s
	}
	python := ""
	if !*noPython && *nodes > 0 {
		p, err := bench.Python()
		if err != nil {
			return err
		}
		python = p
	}
	var fixtures []*bench.Fixture
	if *nodes > 0 {
		fixtures = append(fixtures, bench.BAFixture(*nodes, *m, *seed, max(*events, 1000)))
	}
	if *dirEvents > 0 {
		fixtures = append(fixtures, bench.DirectedFixture(*dirEvents, *seed, max(*events, 1000)))
	}
	var results []bench.Result
	var unfinished []string
	for _, f := range fixtures {
		fmt.Fprintln(stderr, "orbitbench:", f.Describe())
		var nx time.Duration
		if python != "" && f.Kind == delta.Undirected {
			fmt.Fprintf(stderr, "orbitbench: %s networkx.triangles\n", f.Name)
			d, _, err := bench.NetworkxTriangles(python, f.Edges)
			if err != nil {
				return err
			}
			nx = d
		}
		rc := bench.RecountFor(f.Kind)
		for _, c := range bench.Counters(f.Kind) {
			fmt.Fprintf(stderr, "orbitbench: %s %s churn, %d events\n", f.Name, c.Name, *events)
			r := bench.Result{Fixture: f.Name, Counter: c.Name, Recounter: rc.Name, Networkx: nx}
			r.Churn = f.MeasureChurn(c, *events)
			results = append(results, r)
		}
		// The recount comes last: one that passes the limit goes on
		// running until the process ends, and the note under the table
		// says that later rows shared the machine with it.
		fmt.Fprintf(stderr, "orbitbench: %s recount by %s\n", f.Name, rc.Name)
		d, ok := bench.RecountWithin(rc.Recounter(), f.Graph, *limit)
		for i := range results {
			if results[i].Fixture == f.Name {
				results[i].Recount, results[i].RecountUnfinished = d, !ok
			}
		}
		if !ok {
			unfinished = append(unfinished, f.Name)
		}
	}
	fmt.Fprintf(stdout, "```\ngo run ./bench/cmd/orbitbench %s\n```\n\n", strings.Join(args, " "))
	fmt.Fprintf(stdout, "%s/%s, %d cores (GOMAXPROCS %d), %s\n\n", runtime.GOOS, runtime.GOARCH, runtime.NumCPU(), runtime.GOMAXPROCS(0), runtime.Version())
	for _, f := range fixtures {
		fmt.Fprintf(stdout, "- %s\n", f.Describe())
	}
	if len(results) > 0 {
		fmt.Fprintln(stdout)
		writeTable(stdout, results)
	}
	if len(sizes) > 0 {
		if err := scaling(stdout, stderr, sizes, *m, *seed, *events, *plotDir); err != nil {
			return err
		}
	}
	for _, name := range unfinished {
		fmt.Fprintf(stdout, "\nThe recount of %s did not finish within %v (\"> \" rows are lower bounds); it was left running, so later measurements of this run shared the machine with it.\n", name, *limit)
	}
	return nil
}

// writeTable prints one Markdown row per result.
func writeTable(w io.Writer, results []bench.Result) {
	fmt.Fprintln(w, "| graph | engine | events/s | ns/event | ns/insert | ns/delete | allocs/event | changes/event | recount (by) | recount / event | networkx.triangles | recount / networkx |")
	fmt.Fprintln(w, "| --- | --- | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: |")
	for _, r := range results {
		bound := ""
		if r.RecountUnfinished {
			bound = "> "
		}
		nx, ratio := "–", "–"
		if r.Networkx > 0 {
			nx = fmt.Sprintf("%.2f s", r.Networkx.Seconds())
			ratio = fmt.Sprintf("%s%.2f", bound, r.RecountPerNetworkx())
		}
		fmt.Fprintf(w, "| %s | %s | %.0f | %.0f | %.0f | %.0f | %.2f | %.0f | %s%.2f s (%s) | %s%.0f | %s | %s |\n",
			r.Fixture, r.Counter, r.Churn.EventsPerSec(), r.Churn.NsPerEvent(), r.Churn.NsPerAdd(), r.Churn.NsPerRemove(), r.Churn.AllocsPerEvent(),
			r.Churn.EmitsPerEvent(), bound, r.Recount.Seconds(), r.Recounter, bound, r.RecountPerEvent(), nx, ratio)
	}
}
