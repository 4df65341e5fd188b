// Command kindcost measures what each graph kind and graphlet size costs
// through the product's counting path (shard.Applier with its counters,
// cuts every hour of event time, one event per second, vectors derived at
// each cut for the nodes the cut touched, as alert scoring reads them),
// and its static recount of the final graph, on a Barabási–Albert graph
// (directions and signs drawn at random). It prints a table of events per
// second and per hour, and the recount time, from which the README's
// "what to expect" table is made.
package main

import (
	"flag"
	"fmt"
	"math/rand/v2"
	"os"
	"strings"
	"text/tabwriter"
	"time"

	"orbitwatch/bench/gen"
	"orbitwatch/delta"
	"orbitwatch/shard"
	"orbitwatch/storage"
	"orbitwatch/stream"
)

type config struct {
	kind delta.Kind
	k    int
}

func main() {
	nodes := flag.Int("nodes", 20000, "Barabási–Albert nodes")
	m := flag.Int("m", 5, "edges per new node")
	seed := flag.Uint64("seed", 1, "random seed")
	only := flag.String("only", "", "comma-separated configurations to run, e.g. undirected-4,directed-3 (default: all)")
	budget := flag.Duration("budget", 60*time.Second, "stop applying a configuration's events after this long and report the rate so far")
	flag.Parse()
	edges := gen.BarabasiAlbert(*nodes, *m, *seed)
	r := rand.New(rand.NewPCG(*seed, 77))
	flip := make([]bool, len(edges))
	neg := make([]bool, len(edges))
	for i := range edges {
		flip[i] = r.IntN(2) == 0
		neg[i] = r.IntN(10) == 0 // a tenth of the ties negative
	}
	start := time.Date(2026, 3, 1, 0, 0, 0, 0, time.UTC)
	configs := []config{{delta.Undirected, 3}, {delta.Undirected, 4}, {delta.Undirected, 5}, {delta.Directed, 3}, {delta.Directed, 4}, {delta.Signed, 3}, {delta.Signed, 4}}
	tw := tabwriter.NewWriter(os.Stdout, 0, 0, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintf(tw, "kind\tsize\tevents\tevents/s\tevents/hour\tcuts\tscored/cut\trecount\t\n")
	for _, c := range configs {
		name := fmt.Sprintf("%v-%d", c.kind, c.k)
		if *only != "" && !strings.Contains(","+*only+",", ","+name+",") {
			continue
		}
		counting, err := shard.NewCounting(c.kind, c.k)
		if err != nil {
			fmt.Fprintln(os.Stderr, err)
			os.Exit(1)
		}
		a := shard.NewApplier(counting, 0, shard.Cuts{Every: time.Hour})
		cuts, scored := 0, 0
		var buf []uint64
		a.OnCut = func(cp *storage.Checkpoint) error {
			cuts++
			scored += len(cp.Records)
			for _, rc := range cp.Records {
				if buf, err = a.Vector(rc.Node, buf); err != nil {
					return err
				}
			}
			return nil
		}
		t0 := time.Now()
		n := 0
		for i, e := range edges {
			u, v := e.U, e.V
			if c.kind == delta.Directed && flip[i] {
				u, v = v, u
			}
			ev := stream.Event{Op: stream.OpAdd, Src: fmt.Sprint("n", u), Dst: fmt.Sprint("n", v), TS: start.Add(time.Duration(i) * time.Second), HasTS: true, Neg: c.kind == delta.Signed && neg[i]}
			if err := a.Apply(uint64(i+1), ev); err != nil {
				fmt.Fprintln(os.Stderr, name, err)
				os.Exit(1)
			}
			n++
			if n%1000 == 0 && time.Since(t0) > *budget {
				break
			}
		}
		took := time.Since(t0)
		rate := float64(n) / took.Seconds()
		t1 := time.Now()
		counting.Recount.Recount(a.Graph())
		rec := time.Since(t1)
		note := ""
		if n < len(edges) {
			note = fmt.Sprintf(" (first %d)", n)
		}
		fmt.Fprintf(tw, "%v\t2–%d\t%d%s\t%.0f\t%.0fM\t%d\t%.0f\t%.2f s\t\n", c.kind, c.k, n, note, rate, rate*3600/1e6, cuts, float64(scored)/float64(max(cuts, 1)), rec.Seconds())
		fmt.Fprintf(os.Stderr, "kindcost: %s done\n", name)
	}
	tw.Flush()
}
