package plot

import (
	"fmt"
	"image/png"
	"io"
	"strconv"
)

// barRow is the height of one bar of a signature chart, in pixels.
const barRow = 16

// maxLabel is the longest orbit name drawn; longer ones are cut with "...".
const maxLabel = 56

// SignatureBarSVG writes a self-contained SVG of one node's signature: one
// horizontal bar per orbit, labelled with names[i] on the left and the
// count at its end, on a log scale whose floor band holds the zeros. It is
// Width pixels wide and 76 + 16·len(counts) high. Each bar is one <rect
// class="bar">. names and counts must have the same length.
func SignatureBarSVG(w io.Writer, title string, names []string, counts []uint64) error {
	if len(names) != len(counts) {
		return fmt.Errorf("plot: %d orbit names for %d counts", len(names), len(counts))
	}
	s := newSVG(w, Width, barHeight(len(counts)))
	drawBars(s, title, names, counts)
	return s.close()
}

// SignatureBarPNG writes the chart of SignatureBarSVG as a PNG image.
func SignatureBarPNG(w io.Writer, title string, names []string, counts []uint64) error {
	if len(names) != len(counts) {
		return fmt.Errorf("plot: %d orbit names for %d counts", len(names), len(counts))
	}
	p := newPNG(Width, barHeight(len(counts)))
	drawBars(p, title, names, counts)
	return png.Encode(w, p.img)
}

func barHeight(rows int) int { return 76 + barRow*rows }

func drawBars(c canvas, title string, names []string, counts []uint64) {
	longest := 0
	for _, n := range names {
		longest = max(longest, min(len(n), maxLabel))
	}
	left, right, top := float64(charWidth*longest+16), float64(Width-70), 40.0
	vals := make([]float64, len(counts))
	for i, n := range counts {
		vals[i] = float64(n)
	}
	sx := newScale([][]float64{vals}, true, true, left, right)
	bottom := top + float64(barRow*len(counts))
	c.text(Width/2, 24, title, middle, black, "title")
	for _, t := range sx.ticks() {
		x := sx.px(t.v)
		c.line(x, top, x, bottom, 1, light)
		c.text(x, bottom+18, t.label, middle, black, "tick")
	}
	for i, n := range counts {
		y := top + float64(barRow*i)
		x := sx.px(float64(n))
		c.rect(left, y+2, x-left, barRow-4, palette[0], "bar")
		label := names[i]
		if len(label) > maxLabel {
			label = label[:maxLabel-3] + "..."
		}
		c.text(left-6, y+barRow-4, label, end, black, "orbit")
		c.text(x+4, y+barRow-4, strconv.FormatUint(n, 10), start, grey, "count")
	}
	c.line(left, bottom, right, bottom, 1, black)
	c.line(left, top, left, bottom, 1, black)
}
