package plot

import (
	"bytes"
	"encoding/xml"
	"fmt"
	"image/png"
	"io"
	"math"
	"os"
	"strconv"
	"strings"
	"testing"
	"time"
)

// element is one SVG element with its attributes and text.
type element struct {
	name  string
	attr  map[string]string
	text  string
	depth int
}

// parseSVG decodes an SVG document with encoding/xml, failing the test if
// it is not well-formed XML with an <svg> root.
func parseSVG(t *testing.T, doc []byte) []element {
	t.Helper()
	d := xml.NewDecoder(bytes.NewReader(doc))
	var els []element
	var open []int
	for {
		tok, err := d.Token()
		if err == io.EOF {
			break
		}
		if err != nil {
			t.Fatalf("SVG is not XML: %v", err)
		}
		switch tk := tok.(type) {
		case xml.StartElement:
			e := element{name: tk.Name.Local, attr: map[string]string{}, depth: len(open)}
			for _, a := range tk.Attr {
				e.attr[a.Name.Local] = a.Value
			}
			open = append(open, len(els))
			els = append(els, e)
		case xml.EndElement:
			open = open[:len(open)-1]
		case xml.CharData:
			if len(open) > 0 {
				els[open[len(open)-1]].text += string(tk)
			}
		}
	}
	if len(els) == 0 || els[0].name != "svg" || len(open) != 0 {
		t.Fatal("SVG has no <svg> root or unclosed elements")
	}
	return els
}

func byClass(els []element, name, class string) []element {
	var out []element
	for _, e := range els {
		if e.name == name && e.attr["class"] == class {
			out = append(out, e)
		}
	}
	return out
}

func sampleSeries() ([]time.Time, []Series) {
	t0 := time.Date(2026, 1, 1, 0, 0, 0, 0, time.UTC)
	var x []time.Time
	a, b, c := Series{Name: "events/s <eager>"}, Series{Name: "changed counters"}, Series{Name: "rejects & late"}
	for i := 0; i < 30; i++ {
		x = append(x, t0.Add(time.Duration(i)*24*time.Hour))
		a.Y = append(a.Y, 1e5+1e3*float64(i))
		b.Y = append(b.Y, math.Pow(1.5, float64(i)))
		c.Y = append(c.Y, float64(i%3)) // zeros on a log axis
	}
	c.Y[10] = math.NaN()
	return x, []Series{a, b, c}
}

func TestLineChartSVG(t *testing.T) {
	x, series := sampleSeries()
	for _, logY := range []bool{false, true} {
		var buf bytes.Buffer
		if err := LineChartSVG(&buf, "Applier throughput", x, series, logY); err != nil {
			t.Fatal(err)
		}
		els := parseSVG(t, buf.Bytes())
		paths := byClass(els, "path", "series")
		if len(paths) != len(series) {
			t.Fatalf("logY=%v: %d series paths, want %d", logY, len(paths), len(series))
		}
		legend := byClass(els, "text", "legend")
		if len(legend) != len(series) {
			t.Fatalf("logY=%v: %d legend names, want %d", logY, len(legend), len(series))
		}
		for i, s := range series {
			if paths[i].attr["data-name"] != s.Name || legend[i].text != s.Name {
				t.Errorf("series %d: path %q legend %q, want %q", i, paths[i].attr["data-name"], legend[i].text, s.Name)
			}
			d := paths[i].attr["d"]
			if strings.Count(d, "M")+strings.Count(d, "L") != finite(s.Y) {
				t.Errorf("series %d: path %q does not have one point per finite value", i, d)
			}
		}
		// The series with a NaN breaks into two pieces: two move-tos.
		if n := strings.Count(paths[2].attr["d"], "M"); n != 2 {
			t.Errorf("NaN gap: %d pieces, want 2", n)
		}
		ticks := byClass(els, "text", "tick")
		var labels []string
		for _, tk := range ticks {
			labels = append(labels, tk.text)
		}
		all := strings.Join(labels, " ")
		if !strings.Contains(all, "Jan 1") && !strings.Contains(all, "Jan 2") {
			t.Errorf("no date ticks on a 30-day axis: %s", all)
		}
		if logY && !(strings.Contains(all, " 0 ") || strings.HasPrefix(all, "0 ")) {
			t.Errorf("log axis with zeros has no 0 floor label: %s", all)
		}
		if logY && !strings.Contains(all, "100k") {
			t.Errorf("log axis lacks the 100k decade: %s", all)
		}
		if byClass(els, "text", "title")[0].text != "Applier throughput" {
			t.Error("title missing")
		}
	}
}

func finite(ys []float64) int {
	n := 0
	for _, y := range ys {
		if !math.IsNaN(y) {
			n++
		}
	}
	return n
}

func TestLineChartNumericX(t *testing.T) {
	x := []float64{1, 2, 4, 8, 16}
	var buf bytes.Buffer
	if err := LineChartSVG(&buf, "ns per event by shard count", x, []Series{{Name: "p50", Y: []float64{9, 7, 5, 4, 3}}}, false); err != nil {
		t.Fatal(err)
	}
	els := parseSVG(t, buf.Bytes())
	var labels []string
	for _, tk := range byClass(els, "text", "tick") {
		labels = append(labels, tk.text)
	}
	if all := strings.Join(labels, " "); !strings.Contains(all, "5 10 15") {
		t.Errorf("numeric ticks %q", all)
	}
	if err := LineChartSVG(&buf, "bad", x, []Series{{Name: "short", Y: []float64{1}}}, false); err == nil {
		t.Error("no error for a series of the wrong length")
	}
}

func TestLineChartPNG(t *testing.T) {
	x, series := sampleSeries()
	var buf bytes.Buffer
	if err := LineChartPNG(&buf, "Applier throughput", x, series, true); err != nil {
		t.Fatal(err)
	}
	if dir := os.Getenv("ORBITWATCH_PLOT_DIR"); dir != "" {
		_ = os.WriteFile(dir+"/line.png", buf.Bytes(), 0o644)
	}
	img, err := png.Decode(&buf)
	if err != nil {
		t.Fatal(err)
	}
	if b := img.Bounds(); b.Dx() != Width || b.Dy() != Height {
		t.Fatalf("PNG is %v, want %d×%d", b, Width, Height)
	}
	// Every series colour must appear somewhere: the lines were drawn.
	for i := range series {
		want := palette[i]
		found := false
		for y := 0; y < Height && !found; y++ {
			for x := 0; x < Width && !found; x++ {
				r, g, b, _ := img.At(x, y).RGBA()
				found = uint8(r>>8) == want.R && uint8(g>>8) == want.G && uint8(b>>8) == want.B
			}
		}
		if !found {
			t.Errorf("series %d colour %s not in the PNG", i, hex(want))
		}
	}
}

func TestSignatureBars(t *testing.T) {
	names := []string{"edge", "end of 3-path", "middle of 3-path", "triangle", "a very long orbit name that goes on and on past the label limit of the chart"}
	counts := []uint64{12, 0, 1, 3400, 99}
	var buf bytes.Buffer
	if err := SignatureBarSVG(&buf, "acct-000123", names, counts); err != nil {
		t.Fatal(err)
	}
	els := parseSVG(t, buf.Bytes())
	bars := byClass(els, "rect", "bar")
	labels := byClass(els, "text", "orbit")
	if len(bars) != len(counts) || len(labels) != len(counts) {
		t.Fatalf("%d bars, %d labels, want %d", len(bars), len(labels), len(counts))
	}
	width := func(i int) float64 {
		w, err := strconv.ParseFloat(bars[i].attr["width"], 64)
		if err != nil {
			t.Fatal(err)
		}
		return w
	}
	// Log scale with a zero floor: 0 has no bar, 1 a short one, and bar
	// length grows with the count.
	if width(1) != 0 || width(2) <= 0 || !(width(2) < width(0) && width(0) < width(4) && width(4) < width(3)) {
		t.Errorf("bar widths %v %v %v %v %v not ordered like the counts", width(0), width(1), width(2), width(3), width(4))
	}
	if labels[0].text != "edge" || !strings.HasSuffix(labels[4].text, "...") || len(labels[4].text) != maxLabel {
		t.Errorf("labels %q, %q", labels[0].text, labels[4].text)
	}
	if err := SignatureBarSVG(&buf, "x", names[:2], counts); err == nil {
		t.Error("no error for names and counts of different lengths")
	}
	buf.Reset()
	if err := SignatureBarPNG(&buf, "acct-000123", names, counts); err != nil {
		t.Fatal(err)
	}
	if dir := os.Getenv("ORBITWATCH_PLOT_DIR"); dir != "" {
		_ = os.WriteFile(dir+"/bars.png", buf.Bytes(), 0o644)
	}
	img, err := png.Decode(&buf)
	if err != nil {
		t.Fatal(err)
	}
	if b := img.Bounds(); b.Dx() != Width || b.Dy() != barHeight(len(counts)) {
		t.Fatalf("PNG is %v, want %d×%d", b, Width, barHeight(len(counts)))
	}
}

func TestLogScale(t *testing.T) {
	s := newScale([][]float64{{0, 3, 250}}, true, false, 400, 0)
	if s.lo != 0 || s.hi != 3 || !s.floor {
		t.Fatalf("scale %+v, want decades 0..3 with a floor band", s)
	}
	if s.px(0) != 400 || s.px(1) != 400-floorBand || s.px(1000) != 0 {
		t.Errorf("px(0)=%v px(1)=%v px(1000)=%v", s.px(0), s.px(1), s.px(1000))
	}
	prev := s.px(0)
	for _, v := range []float64{1, 2, 10, 99, 100, 999} {
		if p := s.px(v); p >= prev {
			t.Errorf("px(%v) = %v not above %v", v, p, prev)
		} else {
			prev = p
		}
	}
	if noFloor := newScale([][]float64{{5, 50}}, true, false, 100, 0); noFloor.floor || !math.IsNaN(noFloor.px(0)) {
		t.Errorf("positive data: floor %v px(0) %v", noFloor.floor, noFloor.px(0))
	}
}

func TestASCIIFold(t *testing.T) {
	if got := asciiFold("Barabási–Albert, Pržulj 2007, 2×3 → ok, µs ≤ 16 ≥ 1"); got != "Barabasi-Albert, Przulj 2007, 2x3 -> ok, us <= 16 >= 1" {
		t.Errorf("asciiFold = %q", got)
	}
}

func TestNumber(t *testing.T) {
	for _, c := range []struct {
		v    float64
		want string
	}{{0, "0"}, {0.25, "0.25"}, {950, "950"}, {1500, "1.5k"}, {2e6, "2M"}, {1e10, "10G"}, {-3000, "-3k"}} {
		if got := number(c.v); got != c.want {
			t.Errorf("number(%v) = %q, want %q", c.v, got, c.want)
		}
	}
}

func TestTimeTicks(t *testing.T) {
	lo := float64(time.Date(2026, 1, 1, 0, 0, 0, 0, time.UTC).Unix())
	day := timeTicks(lo, lo+30*86400)
	if len(day) == 0 || len(day) > 8 || !strings.HasPrefix(day[0].label, "Jan") {
		t.Errorf("30 days: %v", day)
	}
	hour := timeTicks(lo, lo+3*3600)
	if len(hour) == 0 || len(hour) > 8 || hour[0].label != "Jan 1 00:00" || hour[1].label != "00:30" {
		t.Errorf("3 hours: %v", hour)
	}
	// Across midnight the new date is named where it starts.
	night := timeTicks(lo+20*3600, lo+30*3600)
	var labels []string
	for _, tk := range night {
		labels = append(labels, tk.label)
	}
	if all := strings.Join(labels, " "); !strings.HasPrefix(all, "Jan 1 20:00") || !strings.Contains(all, "Jan 2 00:00") || strings.Count(all, "Jan") != 2 {
		t.Errorf("20:00 to 06:00: %s", all)
	}
}

// TestLineChartHistory: a node's history as `orbitwatch history --plot`
// draws it: step series (a corner at each change), each series with its
// own dash pattern and a width no less than the next one's, a legend
// below the plot whose names all fit the chart, one per row and column
// slot, and the date on the time axis where it changes.
func TestLineChartHistory(t *testing.T) {
	t0 := time.Date(2026, 3, 1, 9, 0, 0, 0, time.UTC)
	names := []string{"4 end of 4-path", "5 middle of 4-path", "7 centre of 3-star", "8 4-cycle", "10 degree-2 node of tailed triangle", "12 degree-2 node of diamond"}
	var x []time.Time
	series := make([]Series, len(names))
	for i := range 40 {
		x = append(x, t0.Add(time.Duration(i*37)*time.Minute))
		for k := range names {
			series[k].Name, series[k].Step = names[k], true
			series[k].Y = append(series[k].Y, float64((i/3+1)*(k%3+1))) // series 0 and 3 are equal
		}
	}
	for _, long := range []bool{false, true} {
		if long {
			series[2].Name = "node paying 1, paid by 2 of a triangle with 1 reciprocal pair, out-degrees 2-1-1 (form a)"
		}
		var buf bytes.Buffer
		if err := LineChartSVG(&buf, "node \"acct-000123\": orbit counts by event time", x, series, true); err != nil {
			t.Fatal(err)
		}
		els := parseSVG(t, buf.Bytes())
		paths := byClass(els, "path", "series")
		dashSeen := map[string]bool{}
		prevW := math.Inf(1)
		for i, p := range paths {
			changes := 0
			for j := 1; j < len(series[i].Y); j++ {
				if series[i].Y[j] != series[i].Y[j-1] {
					changes++
				}
			}
			if n := strings.Count(p.attr["d"], "M") + strings.Count(p.attr["d"], "L"); n != len(series[i].Y)+changes {
				t.Errorf("step series %d: %d points, want %d values and %d corners", i, n, len(series[i].Y), changes)
			}
			if dashSeen[p.attr["stroke-dasharray"]] {
				t.Errorf("series %d repeats dash pattern %q", i, p.attr["stroke-dasharray"])
			}
			dashSeen[p.attr["stroke-dasharray"]] = true
			w, _ := strconv.ParseFloat(p.attr["stroke-width"], 64)
			if w > prevW {
				t.Errorf("series %d is wider (%v) than the one before (%v)", i, w, prevW)
			}
			prevW = w
		}
		legend := byClass(els, "text", "legend")
		type slot struct{ x, y string }
		taken := map[slot]bool{}
		for _, l := range legend {
			lx, _ := strconv.ParseFloat(l.attr["x"], 64)
			if end := lx + float64(charWidth*len([]rune(l.text))); end > Width {
				t.Errorf("long=%v: legend %q ends at %v, past the chart's %d", long, l.text, end, Width)
			}
			s := slot{l.attr["x"], l.attr["y"]}
			if taken[s] {
				t.Errorf("long=%v: two legend names at %v", long, s)
			}
			taken[s] = true
			if y, _ := strconv.ParseFloat(l.attr["y"], 64); y > Height-4 {
				t.Errorf("long=%v: legend %q below the chart (y %v)", long, l.text, y)
			}
		}
		if len(legend) != len(series) {
			t.Fatalf("%d legend names", len(legend))
		}
		var labels []string
		for _, tk := range byClass(els, "text", "tick") {
			labels = append(labels, tk.text)
		}
		if all := strings.Join(labels, " "); !strings.Contains(all, "Mar 1 ") || !strings.Contains(all, "Mar 2 00:00") {
			t.Errorf("time ticks without dates: %s", all)
		}
		if dir := os.Getenv("ORBITWATCH_PLOT_DIR"); dir != "" {
			var png bytes.Buffer
			if err := LineChartPNG(&png, "node \"acct-000123\": orbit counts by event time", x, series, true); err != nil {
				t.Fatal(err)
			}
			_ = os.WriteFile(fmt.Sprintf("%s/history-long-%v.png", dir, long), png.Bytes(), 0o644)
		}
	}
}
