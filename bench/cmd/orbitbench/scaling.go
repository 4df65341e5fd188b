package main

import (
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"

	"orbitwatch/bench"
	"orbitwatch/bench/plot"
)

// plotClasses draws µs of CPU per event against the graph's node count,
// one series per endpoint-degree class and one for uniform edges, as
// dir/per-event.svg and dir/per-event.png (log y). Graphs of the same node
// count (the merchant's) are left out after the first.
func plotClasses(stderr io.Writer, dir string, rows []row) error {
	var x []float64
	series := []plot.Series{{Name: "uniform edges"}}
	for _, name := range bench.BucketNames {
		series = append(series, plot.Series{Name: name})
	}
	for _, r := range rows {
		if r.merchant || len(x) > 0 && x[len(x)-1] == float64(r.nodes) {
			continue
		}
		x = append(x, float64(r.nodes))
		series[0].Y = append(series[0].Y, r.uniform.CPUUs())
		for i, c := range r.class {
			y := math.NaN() // a class the graph lacks leaves a gap
			if c.Events > 0 {
				y = c.CPUUs()
			}
			series[i+1].Y = append(series[i+1].Y, y)
		}
	}
	title := "µs of CPU per edge event by node count, Barabási–Albert m=5"
	for _, out := range []struct {
		name string
		draw func(io.Writer) error
	}{
		{"per-event.svg", func(f io.Writer) error { return plot.LineChartSVG(f, title, x, series, true) }},
		{"per-event.png", func(f io.Writer) error { return plot.LineChartPNG(f, title, x, series, true) }},
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
