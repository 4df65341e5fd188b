package main

import (
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strconv"
	"strings"

	"orbitwatch/bench"
	"orbitwatch/bench/plot"
	"orbitwatch/delta"
)

// parseSizes parses a comma-separated list of node counts, each > m.
func parseSizes(s string, m int) ([]int, error) {
	var sizes []int
	for _, f := range strings.Split(s, ",") {
		n, err := strconv.Atoi(strings.TrimSpace(f))
		if err != nil || n <= m {
			return nil, fmt.Errorf("-scaling %q: %q is not a node count above -m %d", s, f, m)
		}
		sizes = append(sizes, n)
	}
	return sizes, nil
}

// scaling measures each undirected engine's churn cost on Barabási–Albert
// graphs of the given sizes, prints a Markdown table of ns/event and, when
// dir is not empty, draws it as dir/scaling.svg and dir/scaling.png (log y).
func scaling(w, stderr io.Writer, sizes []int, m int, seed uint64, events int, dir string) error {
	counters := bench.Counters(delta.Undirected)
	series := make([]plot.Series, len(counters))
	for i, c := range counters {
		series[i].Name = c.Name + " ns/event"
	}
	x := make([]float64, len(sizes))
	for j, n := range sizes {
		f := bench.BAFixture(n, m, seed, max(events, 1000))
		fmt.Fprintln(stderr, "orbitbench: scaling", f.Describe())
		x[j] = float64(n)
		for i, c := range counters {
			series[i].Y = append(series[i].Y, f.MeasureChurn(c, events).NsPerEvent())
		}
	}
	fmt.Fprintf(w, "\n| BA nodes (m = %d) |", m)
	for _, c := range counters {
		fmt.Fprintf(w, " %s ns/event |", c.Name)
	}
	fmt.Fprintf(w, "\n| ---: |%s\n", strings.Repeat(" ---: |", len(counters)))
	for j, n := range sizes {
		fmt.Fprintf(w, "| %d |", n)
		for i := range counters {
			fmt.Fprintf(w, " %.0f |", series[i].Y[j])
		}
		fmt.Fprintln(w)
	}
	if dir == "" {
		return nil
	}
	title := fmt.Sprintf("Churn cost per event, Barabási–Albert m=%d", m)
	for _, out := range []struct {
		name string
		draw func(io.Writer) error
	}{
		{"scaling.svg", func(f io.Writer) error { return plot.LineChartSVG(f, title, x, series, true) }},
		{"scaling.png", func(f io.Writer) error { return plot.LineChartPNG(f, title, x, series, true) }},
	} {
		path := filepath.Join(dir, out.name)
		f, err := os.Create(path)
		if err != nil {
			return err
		}
		if err := out.draw(f); err != nil {
			f.Close()
			return fmt.Errorf("%s: %w", path, err)
		}
		if err := f.Close(); err != nil {
			return err
		}
		fmt.Fprintln(stderr, "orbitbench: wrote", path)
	}
	return nil
}
