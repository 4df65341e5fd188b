// Command orbitgen writes a synthetic edge-event log of orbitwatch's own
// fictional payments scenario as CSV (ts,op,src,dst), gzip-compressed when
// the output name ends in .gz, and prints a one-line summary.
//
//	go run ./bench/cmd/orbitgen -shape ba -nodes 200000 -m 5 -seed 1 -out ba.csv.gz
//	go run ./bench/cmd/orbitgen -shape payments -nodes 100000 -out pay.csv
//	go run ./bench/cmd/orbitgen -shape directed-payments -events 1300000 -out dpay.csv.gz
//
// Shapes ba and payments write every edge as an add (the grow shape),
// then -churn remove/re-add pairs of random edges; directed-payments writes
// the payments stream (adds only, repeats raise multiplicity).
package main

import (
	"compress/gzip"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"strings"
	"time"

	"orbitwatch/bench/gen"
	"orbitwatch/internal/progress"
)

func main() {
	if err := run(os.Args[1:], os.Stdout, os.Stderr); err != nil {
		fmt.Fprintln(os.Stderr, "orbitgen:", err)
		os.Exit(1)
	}
}

func run(args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("orbitgen", flag.ContinueOnError)
	fs.SetOutput(stderr)
	shape := fs.String("shape", "ba", "graph: ba, payments or directed-payments")
	nodes := fs.Int("nodes", 200000, "nodes (ba) or households (payments)")
	m := fs.Int("m", 5, "edges per new node (ba)")
	events := fs.Int("events", 1300000, "events (directed-payments)")
	churn := fs.Int("churn", 0, "remove/re-add pairs after the grow part (ba, payments)")
	seed := fs.Uint64("seed", 1, "random seed")
	out := fs.String("out", "", "output file (.gz to compress, - for stdout)")
	quiet := fs.Bool("quiet", false, "no progress on stderr")
	if err := fs.Parse(args); err != nil {
		return err
	}
	if *out == "" {
		return errors.New("-out is required")
	}
	t0 := time.Now()
	pop, ev, err := generate(*shape, *nodes, *m, *events, *churn, *seed)
	if err != nil {
		return err
	}
	var w io.Writer = stdout
	var f *os.File
	if *out != "-" {
		if f, err = os.Create(*out); err != nil {
			return err
		}
		defer f.Close()
		w = f
	}
	var zw *gzip.Writer
	if strings.HasSuffix(*out, ".gz") {
		zw = gzip.NewWriter(w)
		w = zw
	}
	cw := &countingWriter{w: w}
	var rep *progress.Reporter
	if !*quiet {
		rep = progress.New(stderr, 0, "orbitgen "+*shape)
	}
	lw := gen.NewLogWriter(cw, pop.AppendName)
	for i, e := range ev {
		if err := lw.Write(e); err != nil {
			return fmt.Errorf("writing %s: %w", *out, err)
		}
		if rep != nil && i%4096 == 4095 {
			rep.Add(4096, 0)
		}
	}
	if err := lw.Flush(); err != nil {
		return fmt.Errorf("writing %s: %w", *out, err)
	}
	if zw != nil {
		if err := zw.Close(); err != nil {
			return fmt.Errorf("writing %s: %w", *out, err)
		}
	}
	if f != nil {
		if err := f.Close(); err != nil {
			return fmt.Errorf("writing %s: %w", *out, err)
		}
	}
	if rep != nil {
		rep.Add(int64(len(ev)%4096), cw.n)
		rep.Done()
	}
	summary := stdout
	if *out == "-" {
		summary = stderr
	}
	fmt.Fprintf(summary, "orbitgen: shape=%s seed=%d nodes=%d events=%d csv-bytes=%d out=%s in %s\n",
		*shape, *seed, pop.Nodes(), len(ev), cw.n, *out, time.Since(t0).Round(time.Millisecond))
	return nil
}

// generate makes the events of one shape.
func generate(shape string, nodes, m, events, churn int, seed uint64) (gen.Population, []gen.Event, error) {
	start := time.Date(2026, 1, 1, 0, 0, 0, 0, time.UTC).Unix()
	var pop gen.Population
	var edges []gen.Edge
	switch shape {
	case "ba":
		if m < 1 || nodes <= m {
			return pop, nil, fmt.Errorf("-shape ba needs -m >= 1 and -nodes > -m, got %d and %d", m, nodes)
		}
		edges = gen.BarabasiAlbert(nodes, m, seed)
		pop = gen.Population{Accounts: nodes}
	case "payments":
		if nodes < 40 {
			return pop, nil, fmt.Errorf("-shape payments needs -nodes >= 40, got %d", nodes)
		}
		pop, edges = gen.Payments(gen.DefaultPayments(nodes), seed)
	case "directed-payments":
		if events < 48 {
			return pop, nil, fmt.Errorf("-shape directed-payments needs -events >= 48, got %d", events)
		}
		pop, ev := gen.DirectedPayments(gen.DefaultDirected(events), seed)
		return pop, ev, nil
	default:
		return pop, nil, fmt.Errorf("unknown -shape %q (want ba, payments or directed-payments)", shape)
	}
	ev := gen.Grow(edges, start)
	if churn > 0 {
		ev = append(ev, gen.Churn(edges, churn, 0, start+int64(len(ev)), seed+1)...)
	}
	return pop, ev, nil
}

// countingWriter counts the bytes of CSV written before compression.
type countingWriter struct {
	w io.Writer
	n int64
}

func (c *countingWriter) Write(p []byte) (int, error) {
	n, err := c.w.Write(p)
	c.n += int64(n)
	return n, err
}
