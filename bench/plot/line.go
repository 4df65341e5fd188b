package plot

import (
	"fmt"
	"image/png"
	"io"
	"math"
	"time"
)

// Width and Height are the size of a line chart, in pixels.
const (
	Width  = 800
	Height = 450
)

// Series is one line of a chart: Y[i] is its value at the chart's x[i]. A
// NaN leaves a gap. A Step series holds each value until the next x (a
// count that changes only at cuts) instead of joining values by slopes.
type Series struct {
	Name string
	Y    []float64
	Step bool
}

// XValue is the type of a chart's x axis: numbers or instants.
type XValue interface{ float64 | time.Time }

// LineChartSVG writes a self-contained SVG line chart of series over x,
// Width × Height pixels, with axes, ticks, a legend below the plot and,
// when logY, a log y axis (zeros drawn on a floor band labelled 0). Each
// series has its colour, dash pattern and width (the first widest, drawn
// first), so that series with equal values stay visible. A time axis is
// in UTC, its ticks labelled with the date where it changes. Each series
// is one <path class="series">; each legend name one <text
// class="legend">. Every series must have len(x) values.
func LineChartSVG[X XValue](w io.Writer, title string, x []X, series []Series, logY bool) error {
	xs, isTime, err := lineInput(x, series)
	if err != nil {
		return err
	}
	s := newSVG(w, Width, Height)
	drawLines(s, title, xs, isTime, series, logY)
	return s.close()
}

// LineChartPNG writes the chart of LineChartSVG as a PNG image of Width ×
// Height pixels.
func LineChartPNG[X XValue](w io.Writer, title string, x []X, series []Series, logY bool) error {
	xs, isTime, err := lineInput(x, series)
	if err != nil {
		return err
	}
	p := newPNG(Width, Height)
	drawLines(p, title, xs, isTime, series, logY)
	return png.Encode(w, p.img)
}

// lineInput turns x into float64 (unix seconds for instants) and checks
// the series lengths.
func lineInput[X XValue](x []X, series []Series) ([]float64, bool, error) {
	xs := make([]float64, len(x))
	isTime := false
	for i, v := range x {
		switch v := any(v).(type) {
		case float64:
			xs[i] = v
		case time.Time:
			xs[i] = float64(v.UnixNano()) / 1e9
			isTime = true
		}
	}
	for _, s := range series {
		if len(s.Y) != len(x) {
			return nil, false, fmt.Errorf("plot: series %q has %d values for %d x values", s.Name, len(s.Y), len(x))
		}
	}
	return xs, isTime, nil
}

// dashes are the series' dash patterns, in pixels, beside the palette's
// colours: a series stays told apart in grey print and where colours are
// hard to tell.
var dashes = [][]float64{nil, {9, 4}, {2, 3}, {12, 3, 2, 3}, {5, 2}, {1, 3}, {14, 5}, {3, 3, 1, 3}}

// legendLayout returns the legend's columns and rows for names, and the
// most characters a name may keep: two columns when every name fits half
// the width, else one.
func legendLayout(names []string, width int) (cols, rows, chars int) {
	half := (width - 40) / 2
	cols, chars = 2, (half-40)/charWidth
	for _, n := range names {
		if len([]rune(n)) > chars {
			cols, chars = 1, (width-80)/charWidth
			break
		}
	}
	if len(names) < 2 {
		cols = 1
	}
	return cols, (len(names) + cols - 1) / cols, chars
}

func drawLines(c canvas, title string, xs []float64, isTime bool, series []Series, logY bool) {
	names := make([]string, len(series))
	for i, s := range series {
		names[i] = s.Name
	}
	cols, rows, chars := legendLayout(names, Width)
	const rowH = 17
	left, right, top := 70.0, float64(Width-20), 40.0
	bottom := float64(Height - 48 - rows*rowH)
	ys := make([][]float64, len(series))
	for i, s := range series {
		ys[i] = s.Y
	}
	sy := newScale(ys, logY, !logY, bottom, top)
	sx := scale{lo: 0, hi: 1, p0: left, p1: right}
	if len(xs) > 0 {
		sx.lo, sx.hi = xs[0], xs[0]
		for _, v := range xs {
			sx.lo, sx.hi = math.Min(sx.lo, v), math.Max(sx.hi, v)
		}
		if sx.hi == sx.lo {
			sx.lo, sx.hi = sx.lo-1, sx.hi+1
		}
	}
	c.text(Width/2, 24, title, middle, black, "title")
	for _, t := range sy.ticks() {
		y := sy.px(t.v)
		c.line(left, y, right, y, 1, light)
		c.text(left-6, y+4, t.label, end, black, "tick")
	}
	xt := timeTicks(sx.lo, sx.hi)
	if !isTime {
		xt = nil
		for _, t := range sx.ticks() {
			if t.v >= sx.lo && t.v <= sx.hi {
				xt = append(xt, t)
			}
		}
	}
	for _, t := range xt {
		x := sx.px(t.v)
		c.line(x, top, x, bottom, 1, light)
		c.line(x, bottom, x, bottom+5, 1, black)
		c.text(x, bottom+18, t.label, middle, black, "tick")
	}
	if isTime {
		c.text(right, bottom+32, "UTC", end, grey, "axis")
	}
	c.line(left, bottom, right, bottom, 1, black)
	c.line(left, top, left, bottom, 1, black)
	colW := (right - left + 50) / float64(cols)
	for i, s := range series {
		col, dash := palette[i%len(palette)], dashes[i%len(dashes)]
		width := math.Max(1.5, 3.5-0.5*float64(i))
		c.polyline(seriesPoints(sx, sy, xs, s), width, col, dash, "series", s.Name)
		lx := left - 50 + colW*float64(i%cols)
		ly := bottom + 44 + rowH*float64(i/cols)
		c.polyline([]point{{lx, ly - 4}, {lx + 26, ly - 4}}, 3, col, dash, "swatch", s.Name)
		c.text(lx+32, ly, clipRunes(s.Name, chars), start, black, "legend")
	}
}

// seriesPoints returns the pixels of s: one per value, and for a Step
// series a corner before each change (the old value at the new x).
func seriesPoints(sx, sy scale, xs []float64, s Series) []point {
	pts := make([]point, 0, 2*len(xs))
	for j, v := range s.Y {
		x := sx.px(xs[j])
		if s.Step && j > 0 && !math.IsNaN(s.Y[j-1]) && !math.IsNaN(v) && s.Y[j-1] != v {
			pts = append(pts, point{x, sy.px(s.Y[j-1])})
		}
		pts = append(pts, point{x, sy.px(v)})
	}
	return pts
}

// clipRunes cuts s to at most n runes, ending in "…" when cut.
func clipRunes(s string, n int) string {
	r := []rune(s)
	if len(r) <= n || n < 2 {
		return s
	}
	return string(r[:n-1]) + "…"
}
