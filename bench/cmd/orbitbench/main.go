// Command orbitbench measures the product's undirected 2–4 node counting
// where the issue of counting at stream speed asks for figures, and prints
// Markdown tables for the README's performance section (the exact command
// line above them):
//
//   - the cost of one edge event through shard.Applier (random present
//     edges removed and at once re-added; wall and process CPU time) on
//     Barabási–Albert graphs of several sizes, overall and by the larger
//     endpoint degree (≤16, ≤128, ≤1k, >1k);
//
//   - reading a vector (derived on read) for a random node and for the
//     node of largest degree;
//
//   - the same with one merchant paid by a share of extra payments (a hub
//     of 10⁵ customers), per event against the graph without it, the two
//     alternated round by round in one run;
//
//   - the heap the in-memory state takes per edge (graph, dictionary,
//     counter records), apart from Badger;
//
//   - with -recount, the static recount against networkx.triangles.
//
//     go run ./bench/cmd/orbitbench
//     go run ./bench/cmd/orbitbench -sizes 50000,200000 -merchant 0 -plot .
//
// Nothing here checks counts (the delta packages' tests do, against brute
// force and outside references).
package main

import (
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"runtime"
	"slices"
	"strconv"
	"strings"
	"time"

	"orbitwatch/bench"
	"orbitwatch/bench/gen"
	"orbitwatch/delta"
	"orbitwatch/shard"
)

func main() {
	if err := run(os.Args[1:], os.Stdout, os.Stderr); err != nil {
		fmt.Fprintln(os.Stderr, "orbitbench:", err)
		os.Exit(1)
	}
}

type config struct {
	sizes      []int
	m          int
	seed       uint64
	perClass   int
	uniform    int
	reads      int
	merchant   float64
	merchantOn int
	rounds     int
	memory     bool
	recount    bool
	plotDir    string
}

func run(args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("orbitbench", flag.ContinueOnError)
	fs.SetOutput(stderr)
	var cfg config
	sizes := fs.String("sizes", "50000,200000,800000", "Barabási–Albert node counts (comma-separated)")
	fs.IntVar(&cfg.m, "m", 5, "Barabási–Albert edges per new node")
	fs.Uint64Var(&cfg.seed, "seed", 1, "random seed of the graphs and samples")
	fs.IntVar(&cfg.uniform, "events", 20000, "churn events on edges drawn uniformly, per graph")
	fs.IntVar(&cfg.perClass, "per-class", 2000, "edges drawn from each endpoint-degree class (two events each)")
	fs.IntVar(&cfg.reads, "reads", 20000, "vector reads of random nodes")
	fs.Float64Var(&cfg.merchant, "merchant", 0.2, "extra payments to one merchant as a share of the edges (0: none)")
	fs.IntVar(&cfg.merchantOn, "merchant-nodes", 200000, "node count of the graph the merchant joins (one of -sizes)")
	fs.IntVar(&cfg.rounds, "rounds", 4, "alternated rounds of the merchant/plain ratio")
	fs.BoolVar(&cfg.memory, "memory", true, "measure the heap of the in-memory state")
	fs.BoolVar(&cfg.recount, "recount", false, "time the static recount against networkx.triangles on each graph")
	fs.StringVar(&cfg.plotDir, "plot", "", "directory for per-event.svg and per-event.png: µs per event by graph size and degree class")
	if err := fs.Parse(args); err != nil {
		return err
	}
	if fs.NArg() > 0 {
		return fmt.Errorf("unexpected arguments %q", fs.Args())
	}
	for _, f := range strings.Split(*sizes, ",") {
		n, err := strconv.Atoi(strings.TrimSpace(f))
		if err != nil || n <= cfg.m || cfg.m < 1 {
			return fmt.Errorf("-sizes %q: %q is not a node count above -m %d", *sizes, f, cfg.m)
		}
		cfg.sizes = append(cfg.sizes, n)
	}
	if cfg.uniform < 2 || cfg.perClass < 1 || cfg.reads < 1 || cfg.rounds < 1 {
		return errors.New("-events must be at least 2, -per-class, -reads and -rounds at least 1")
	}
	if cfg.merchant < 0 || cfg.merchant > 1 {
		return fmt.Errorf("-merchant %v: want a share in [0, 1]", cfg.merchant)
	}
	if cfg.merchant > 0 && !slices.Contains(cfg.sizes, cfg.merchantOn) {
		return fmt.Errorf("-merchant-nodes %d is not one of -sizes", cfg.merchantOn)
	}
	python := ""
	if cfg.recount {
		p, err := bench.Python()
		if err != nil {
			return err
		}
		python = p
	}

	var rows []row
	var merchantRow *merchantResult
	for _, n := range cfg.sizes {
		edges := gen.BarabasiAlbert(n, cfg.m, cfg.seed)
		r, plain, err := measureGraph(stderr, fmt.Sprintf("BA(%s, %d)", size(n), cfg.m), edges, bench.AccountNamer(0), cfg, python)
		if err != nil {
			return err
		}
		rows = append(rows, r)
		if cfg.merchant > 0 && n == cfg.merchantOn {
			withM := gen.WithMerchant(edges, n, cfg.merchant, cfg.seed+6)
			r, heavy, err := measureGraph(stderr, fmt.Sprintf("BA(%s, %d) + merchant", size(n), cfg.m), withM, bench.AccountNamer(n), cfg, python)
			if err != nil {
				return err
			}
			r.merchant = true
			rows = append(rows, r)
			mr, err := alternate(stderr, plain, heavy, uint32(n), cfg)
			if err != nil {
				return err
			}
			merchantRow = &mr
		}
		runtime.GC()
	}

	fmt.Fprintf(stdout, "```\ngo run ./bench/cmd/orbitbench %s\n```\n\n", strings.Join(args, " "))
	fmt.Fprintf(stdout, "%s/%s, %d cores (GOMAXPROCS %d), %s; load average %s at the end\n\n",
		runtime.GOOS, runtime.GOARCH, runtime.NumCPU(), runtime.GOMAXPROCS(0), runtime.Version(), bench.LoadAverage())
	writeEvents(stdout, rows)
	writeReads(stdout, rows)
	if merchantRow != nil {
		writeMerchant(stdout, *merchantRow, cfg)
	}
	if cfg.memory {
		if err := memory(stdout, stderr, cfg); err != nil {
			return err
		}
	}
	if cfg.recount {
		writeRecount(stdout, rows)
	}
	if cfg.plotDir != "" {
		return plotClasses(stderr, cfg.plotDir, rows)
	}
	return nil
}

func size(n int) string {
	if n%1000 == 0 {
		return fmt.Sprintf("%dk", n/1000)
	}
	return strconv.Itoa(n)
}

// row is one graph's figures.
type row struct {
	name                string
	merchant            bool // the graph with the merchant, not in the plot
	nodes, edges        int
	maxDeg              int
	uniform             bench.Cost
	class               []bench.Cost
	share               []float64
	readRandom, readHub bench.Cost
	recount, networkx   time.Duration
}

// measureGraph builds the product's state for edges and measures churn
// and reads on it; it returns the state for the merchant ratio.
func measureGraph(stderr io.Writer, name string, edges []gen.Edge, namer gen.Namer, cfg config, python string) (row, *bench.Product, error) {
	fmt.Fprintf(stderr, "orbitbench: %s: building the state from %d adds\n", name, len(edges))
	p, err := bench.NewProduct(edges, namer, shard.DefaultCutEvery)
	if err != nil {
		return row{}, nil, err
	}
	r := row{name: name, nodes: gen.MaxNode(edges), edges: len(edges)}
	var hub uint32
	r.maxDeg, hub = p.MaxDegree()
	fmt.Fprintf(stderr, "orbitbench: %s: churn\n", name)
	if r.uniform, err = p.Churn(p.SampleUniform(cfg.uniform/2, cfg.seed)); err != nil {
		return r, nil, err
	}
	samples, share := p.SampleByDegree(cfg.perClass, cfg.seed)
	r.share = share
	for _, s := range samples {
		var c bench.Cost
		if len(s) > 0 {
			if c, err = p.Churn(s); err != nil {
				return r, nil, err
			}
		}
		r.class = append(r.class, c)
	}
	nodes := make([]uint32, cfg.reads)
	for i := range nodes {
		nodes[i] = uint32((uint64(i)*2654435761 + cfg.seed) % uint64(r.nodes))
	}
	if r.readRandom, err = p.Read(nodes); err != nil {
		return r, nil, err
	}
	hubReads := make([]uint32, max(1, cfg.reads/100))
	for i := range hubReads {
		hubReads[i] = hub
	}
	if r.readHub, err = p.Read(hubReads); err != nil {
		return r, nil, err
	}
	if python != "" {
		fmt.Fprintf(stderr, "orbitbench: %s: static recount and networkx.triangles\n", name)
		c, _ := shard.NewCounting(delta.Undirected, 4)
		t0 := time.Now()
		c.Recount.Recount(p.Applier.Graph())
		r.recount = time.Since(t0)
		nx, err := bench.TimeNetworkxTriangles(python, edges)
		if err != nil {
			return r, nil, err
		}
		r.networkx = nx.Wall
	}
	return r, p, nil
}

type merchantResult struct {
	plain, heavy bench.Cost
	ratios       []float64
	degree       int
	edges        int // of the graph with the merchant
}

// alternate measures uniform churn on the graph with the merchant and on
// the one without, round by round, so that both see the same machine.
func alternate(stderr io.Writer, plain, heavy *bench.Product, merchant uint32, cfg config) (merchantResult, error) {
	fmt.Fprintf(stderr, "orbitbench: merchant/plain, %d rounds\n", cfg.rounds)
	res := merchantResult{degree: heavy.Degree(merchant), edges: len(heavy.Edges)}
	sp := plain.SampleUniform(cfg.uniform/2, cfg.seed+1)
	sh := heavy.SampleUniform(cfg.uniform/2, cfg.seed+1)
	for range cfg.rounds {
		h, err := heavy.Churn(sh)
		if err != nil {
			return res, err
		}
		p, err := plain.Churn(sp)
		if err != nil {
			return res, err
		}
		res.heavy, res.plain = res.heavy.Add(h), res.plain.Add(p)
		res.ratios = append(res.ratios, h.CPUUs()/p.CPUUs())
	}
	return res, nil
}

func us(c bench.Cost, cpu bool) string {
	if c.Events == 0 {
		return "–"
	}
	if cpu {
		return fmt.Sprintf("%.2f", c.CPUUs())
	}
	return fmt.Sprintf("%.2f", c.WallUs())
}

func writeEvents(w io.Writer, rows []row) {
	fmt.Fprintln(w, "Per event (remove or add of a random present edge, through shard.Applier, hourly cuts taken; µs of process CPU, wall in brackets; by the larger endpoint degree: µs CPU and the class's share of edges):")
	fmt.Fprintln(w)
	fmt.Fprintf(w, "| graph | nodes | edges | max degree | µs/event | allocs/event | %s |\n", strings.Join(bench.BucketNames, " | "))
	fmt.Fprintf(w, "| --- | ---: | ---: | ---: | ---: | ---: |%s\n", strings.Repeat(" ---: |", len(bench.BucketNames)))
	for _, r := range rows {
		fmt.Fprintf(w, "| %s | %d | %d | %d | %s (%s) | %.2f |", r.name, r.nodes, r.edges, r.maxDeg, us(r.uniform, true), us(r.uniform, false), r.uniform.AllocsPer())
		for i, c := range r.class {
			if c.Events == 0 {
				fmt.Fprint(w, " – |")
				continue
			}
			fmt.Fprintf(w, " %s (%s) |", us(c, true), pct(r.share[i]))
		}
		fmt.Fprintln(w)
	}
	fmt.Fprintln(w)
}

func pct(s float64) string {
	switch {
	case s >= 0.01:
		return fmt.Sprintf("%.0f%%", 100*s)
	case s >= 0.0001:
		return fmt.Sprintf("%.2f%%", 100*s)
	}
	return fmt.Sprintf("%.4f%%", 100*s)
}

func writeReads(w io.Writer, rows []row) {
	fmt.Fprintln(w, "Reading a vector (derived from the node's record and its neighbours'), µs of process CPU:")
	fmt.Fprintln(w)
	fmt.Fprintln(w, "| graph | random node | node of largest degree | allocs/read |")
	fmt.Fprintln(w, "| --- | ---: | ---: | ---: |")
	for _, r := range rows {
		fmt.Fprintf(w, "| %s | %s | %s (degree %d) | %.2f |\n", r.name, us(r.readRandom, true), us(r.readHub, true), r.maxDeg, r.readRandom.AllocsPer())
	}
	fmt.Fprintln(w)
}

func writeMerchant(w io.Writer, m merchantResult, cfg config) {
	fmt.Fprintf(w, "One merchant paid by %.0f%% extra payments (%d customers), edges drawn uniformly (so about one event in %.0f is a payment to it), against the graph without it, %d rounds alternated:\n\n",
		100*cfg.merchant, m.degree, float64(m.edges)/float64(m.degree), len(m.ratios))
	lo, hi := slices.Min(m.ratios), slices.Max(m.ratios)
	fmt.Fprintln(w, "| graph | µs/event CPU | µs/event wall | merchant / plain (CPU), rounds min–max |")
	fmt.Fprintln(w, "| --- | ---: | ---: | ---: |")
	fmt.Fprintf(w, "| without the merchant | %s | %s | |\n", us(m.plain, true), us(m.plain, false))
	fmt.Fprintf(w, "| with the merchant | %s | %s | %.2f× (%.2f–%.2f) |\n\n", us(m.heavy, true), us(m.heavy, false), m.heavy.CPUUs()/m.plain.CPUUs(), lo, hi)
}

// memory measures the state's heap for every size, one graph at a time.
func memory(w, stderr io.Writer, cfg config) error {
	fmt.Fprintln(w, "Heap of the in-memory state after building it from the log (bytes per edge; in use, live in brackets; Badger's tables and caches not included):")
	fmt.Fprintln(w)
	fmt.Fprintln(w, "| graph | edges | graph (Roaring) | dictionary | counter records + adjacency | whole applier | whole, MiB |")
	fmt.Fprintln(w, "| --- | ---: | ---: | ---: | ---: | ---: | ---: |")
	for _, n := range cfg.sizes {
		fmt.Fprintf(stderr, "orbitbench: memory of BA(%s, %d)\n", size(n), cfg.m)
		s, err := bench.MeasureState(gen.BarabasiAlbert(n, cfg.m, cfg.seed), bench.AccountNamer(0))
		if err != nil {
			return err
		}
		per := func(h bench.Heap) string {
			return fmt.Sprintf("%.0f (%.0f)", float64(h.InUse)/float64(s.Edges), float64(h.Live)/float64(s.Edges))
		}
		fmt.Fprintf(w, "| BA(%s, %d) | %d | %s | %s | %s | %s | %.0f |\n", size(n), cfg.m, s.Edges, per(s.Graph), per(s.Dict), per(s.Counter), per(s.Total), float64(s.Total.InUse)/(1<<20))
	}
	fmt.Fprintln(w)
	return nil
}

func writeRecount(w io.Writer, rows []row) {
	fmt.Fprintln(w, "Static recount of the final graph (delta/undirected, what verify runs) against networkx.triangles (triangles only) on the same graph:")
	fmt.Fprintln(w)
	fmt.Fprintln(w, "| graph | recount s | networkx.triangles s | networkx / recount |")
	fmt.Fprintln(w, "| --- | ---: | ---: | ---: |")
	for _, r := range rows {
		if r.networkx == 0 {
			fmt.Fprintf(w, "| %s | %.2f | – | – |\n", r.name, r.recount.Seconds())
			continue
		}
		fmt.Fprintf(w, "| %s | %.2f | %.2f | %.1f× |\n", r.name, r.recount.Seconds(), r.networkx.Seconds(), r.networkx.Seconds()/r.recount.Seconds())
	}
	fmt.Fprintf(w, "\nnetworkx is not timed (–) on a graph with a node of degree above %d.\n", bench.NetworkxMaxDegree)
	fmt.Fprintln(w)
}
