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
// NaN leaves a gap.
type Series struct {
	Name string
	Y    []float64
}

// XValue is the type of a chart's x axis: numbers or instants.
type XValue interface{ float64 | time.Time }

// LineChartSVG writes a self-contained SVG line chart of series over x,
// Width × Height pixels, with axes, ticks, a legend and, when logY, a log
// y axis (zeros drawn on a floor band labelled 0). Each series is one
// <path class="series">; each legend name one <text class="legend">. Every
// series must have len(x) values.
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

func drawLines(c canvas, title string, xs []float64, isTime bool, series []Series, logY bool) {
	legendW := 100
	for _, s := range series {
		legendW = max(legendW, 40+charWidth*len(s.Name))
	}
	legendW = min(legendW, Width/3)
	left, right, top, bottom := 70.0, float64(Width-legendW), 40.0, float64(Height-40)
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
		c.line(x, bottom, x, bottom+5, 1, black)
		c.text(x, bottom+18, t.label, middle, black, "tick")
	}
	c.line(left, bottom, right, bottom, 1, black)
	c.line(left, top, left, bottom, 1, black)
	pts := make([]point, len(xs))
	for i, s := range series {
		col := palette[i%len(palette)]
		for j, v := range s.Y {
			pts[j] = point{sx.px(xs[j]), sy.px(v)}
		}
		c.polyline(pts, 2, col, "series", s.Name)
		ly := top + 8 + 18*float64(i)
		c.line(right+12, ly-4, right+32, ly-4, 3, col)
		c.text(right+38, ly, s.Name, start, black, "legend")
	}
}
