package plot

import (
	"bufio"
	"encoding/xml"
	"fmt"
	"image"
	"image/color"
	"image/draw"
	"io"
	"math"
	"strings"

	"golang.org/x/image/font"
	"golang.org/x/image/font/basicfont"
	"golang.org/x/image/math/fixed"
	"golang.org/x/image/vector"
)

// anchor is where a text's reference point sits: at its start, middle or
// end.
type anchor int

const (
	start anchor = iota
	middle
	end
)

type point struct{ x, y float64 }

// canvas is what a chart draws on. Coordinates are pixels from the top
// left. A polyline breaks wherever a point has a NaN coordinate.
type canvas interface {
	rect(x, y, w, h float64, fill color.RGBA, class string)
	line(x1, y1, x2, y2, width float64, c color.RGBA)
	// polyline draws dashed when dash (on, off, on, … lengths) is set.
	polyline(pts []point, width float64, c color.RGBA, dash []float64, class, name string)
	// text draws s with its baseline at y.
	text(x, y float64, s string, a anchor, c color.RGBA, class string)
}

// charWidth is the advance of the PNG font (basicfont 7×13) and the width
// the SVG layout assumes for its 12 px monospace text.
const charWidth = 7

var (
	black = color.RGBA{0x20, 0x20, 0x20, 0xff}
	grey  = color.RGBA{0x80, 0x80, 0x80, 0xff}
	light = color.RGBA{0xe4, 0xe4, 0xe4, 0xff}
	white = color.RGBA{0xff, 0xff, 0xff, 0xff}
)

// palette holds the series colours, chosen to stay apart for the common
// forms of colour blindness (Okabe & Ito 2008, "Color Universal Design").
var palette = []color.RGBA{
	{0x00, 0x72, 0xb2, 0xff}, {0xe6, 0x9f, 0x00, 0xff}, {0x00, 0x9e, 0x73, 0xff},
	{0xd5, 0x5e, 0x00, 0xff}, {0xcc, 0x79, 0xa7, 0xff}, {0x56, 0xb4, 0xe9, 0xff},
	{0xf0, 0xe4, 0x42, 0xff}, {0x00, 0x00, 0x00, 0xff},
}

func hex(c color.RGBA) string { return fmt.Sprintf("#%02x%02x%02x", c.R, c.G, c.B) }

// svgCanvas writes SVG elements as they are drawn.
type svgCanvas struct {
	w   *bufio.Writer
	err error
}

func newSVG(w io.Writer, width, height int) *svgCanvas {
	s := &svgCanvas{w: bufio.NewWriter(w)}
	s.printf(`<svg xmlns="http://www.w3.org/2000/svg" width="%d" height="%d" viewBox="0 0 %d %d" font-family="monospace" font-size="12">`+"\n",
		width, height, width, height)
	s.rect(0, 0, float64(width), float64(height), white, "background")
	return s
}

func (s *svgCanvas) printf(format string, args ...any) {
	if s.err == nil {
		_, s.err = fmt.Fprintf(s.w, format, args...)
	}
}

func (s *svgCanvas) close() error {
	s.printf("</svg>\n")
	if s.err != nil {
		return s.err
	}
	return s.w.Flush()
}

func escape(s string) string {
	var b []byte
	w := byteWriter{&b}
	_ = xml.EscapeText(w, []byte(s)) // writing to memory cannot fail
	return string(b)
}

type byteWriter struct{ b *[]byte }

func (w byteWriter) Write(p []byte) (int, error) { *w.b = append(*w.b, p...); return len(p), nil }

func (s *svgCanvas) rect(x, y, w, h float64, fill color.RGBA, class string) {
	s.printf(`<rect class="%s" x="%.1f" y="%.1f" width="%.1f" height="%.1f" fill="%s"/>`+"\n", class, x, y, w, h, hex(fill))
}

func (s *svgCanvas) line(x1, y1, x2, y2, width float64, c color.RGBA) {
	s.printf(`<line x1="%.1f" y1="%.1f" x2="%.1f" y2="%.1f" stroke="%s" stroke-width="%.1f"/>`+"\n", x1, y1, x2, y2, hex(c), width)
}

func (s *svgCanvas) polyline(pts []point, width float64, c color.RGBA, dash []float64, class, name string) {
	s.printf(`<path class="%s" data-name="%s" fill="none" stroke="%s" stroke-width="%.1f" stroke-linejoin="round"`, class, escape(name), hex(c), width)
	if len(dash) > 0 {
		s.printf(` stroke-dasharray="%s"`, strings.Trim(fmt.Sprint(dash), "[]"))
	}
	s.printf(` d="`)
	pen := false
	for _, p := range pts {
		if math.IsNaN(p.x) || math.IsNaN(p.y) {
			pen = false
			continue
		}
		op := "L"
		if !pen {
			op = "M"
		}
		s.printf("%s%.1f %.1f ", op, p.x, p.y)
		pen = true
	}
	s.printf(`"/>` + "\n")
}

func (s *svgCanvas) text(x, y float64, str string, a anchor, c color.RGBA, class string) {
	as := [...]string{"start", "middle", "end"}[a]
	s.printf(`<text class="%s" x="%.1f" y="%.1f" text-anchor="%s" fill="%s">%s</text>`+"\n", class, x, y, as, hex(c), escape(str))
}

// pngCanvas rasterises onto an RGBA image.
type pngCanvas struct {
	img *image.RGBA
	z   *vector.Rasterizer
}

func newPNG(width, height int) *pngCanvas {
	p := &pngCanvas{img: image.NewRGBA(image.Rect(0, 0, width, height)), z: vector.NewRasterizer(width, height)}
	draw.Draw(p.img, p.img.Bounds(), image.NewUniform(white), image.Point{}, draw.Src)
	return p
}

func (p *pngCanvas) rect(x, y, w, h float64, fill color.RGBA, _ string) {
	r := image.Rect(int(math.Round(x)), int(math.Round(y)), int(math.Round(x+w)), int(math.Round(y+h)))
	draw.Draw(p.img, r, image.NewUniform(fill), image.Point{}, draw.Over)
}

// quad adds the stroke of segment ab, width wide, to the rasteriser. Every
// quad winds the same way, so overlapping joints never cancel.
func (p *pngCanvas) quad(a, b point, width float64) {
	dx, dy := b.x-a.x, b.y-a.y
	n := math.Hypot(dx, dy)
	if n == 0 {
		dx, dy, n = 1, 0, 1
	}
	ox, oy := -dy/n*width/2, dx/n*width/2
	p.z.MoveTo(float32(a.x+ox), float32(a.y+oy))
	p.z.LineTo(float32(b.x+ox), float32(b.y+oy))
	p.z.LineTo(float32(b.x-ox), float32(b.y-oy))
	p.z.LineTo(float32(a.x-ox), float32(a.y-oy))
	p.z.ClosePath()
}

func (p *pngCanvas) fill(c color.RGBA) {
	p.z.Draw(p.img, p.img.Bounds(), image.NewUniform(c), image.Point{})
	p.z.Reset(p.img.Bounds().Dx(), p.img.Bounds().Dy())
}

func (p *pngCanvas) line(x1, y1, x2, y2, width float64, c color.RGBA) {
	p.z.DrawOp = draw.Over
	p.quad(point{x1, y1}, point{x2, y2}, width)
	p.fill(c)
}

func (p *pngCanvas) polyline(pts []point, width float64, c color.RGBA, dash []float64, _, _ string) {
	p.z.DrawOp = draw.Over
	k, left := 0, 0.0 // the dash pattern's current part and what is left of it
	if len(dash) > 0 {
		left = dash[0]
	}
	for i := 1; i < len(pts); i++ {
		a, b := pts[i-1], pts[i]
		if math.IsNaN(a.x+a.y) || math.IsNaN(b.x+b.y) {
			continue
		}
		if len(dash) == 0 {
			p.quad(a, b, width)
			continue
		}
		// Walk the segment part by part; even parts are drawn.
		n := math.Hypot(b.x-a.x, b.y-a.y)
		for at := 0.0; at < n; {
			step := math.Min(left, n-at)
			if k%2 == 0 {
				p.quad(lerp(a, b, at/n), lerp(a, b, (at+step)/n), width)
			}
			at += step
			if left -= step; left <= 0 {
				k = (k + 1) % len(dash)
				left = dash[k]
			}
		}
	}
	p.fill(c)
}

func lerp(a, b point, f float64) point { return point{a.x + (b.x-a.x)*f, a.y + (b.y-a.y)*f} }

// asciiFold replaces what the PNG font (ASCII only) cannot draw: letters
// with accents by the bare letter, dashes by '-', other runes by '?'.
func asciiFold(s string) string {
	var b strings.Builder
	for _, r := range s {
		switch {
		case r < 0x80:
			b.WriteRune(r)
		case strings.ContainsRune("–—−", r):
			b.WriteByte('-')
		case r == '×':
			b.WriteByte('x')
		case r == '→':
			b.WriteString("->")
		case r == '≤':
			b.WriteString("<=")
		case r == '≥':
			b.WriteString(">=")
		case r == 'µ' || r == 'μ':
			b.WriteByte('u')
		default:
			if f, ok := folds[r]; ok {
				b.WriteByte(f)
			} else {
				b.WriteByte('?')
			}
		}
	}
	return b.String()
}

// folds maps accented Latin letters to their bare letter.
var folds = func() map[rune]byte {
	m := make(map[rune]byte)
	for base, accented := range map[byte]string{
		'a': "áàâäãåā", 'c': "çčć", 'e': "éèêëěē", 'i': "íìîïī", 'n': "ñň", 'o': "óòôöõøō",
		'r': "ř", 's': "šś", 'u': "úùûüůū", 'y': "ýÿ", 'z': "žźż",
		'A': "ÁÀÂÄÃÅ", 'C': "ÇČ", 'E': "ÉÈÊËĚ", 'I': "ÍÌÎÏ", 'N': "ÑŇ", 'O': "ÓÒÔÖÕØ",
		'R': "Ř", 'S': "Š", 'U': "ÚÙÛÜŮ", 'Y': "Ý", 'Z': "Ž",
	} {
		for _, r := range accented {
			m[r] = base
		}
	}
	return m
}()

func (p *pngCanvas) text(x, y float64, s string, a anchor, c color.RGBA, _ string) {
	s = asciiFold(s)
	d := font.Drawer{Dst: p.img, Src: image.NewUniform(c), Face: basicfont.Face7x13}
	w := float64(d.MeasureString(s)) / 64
	x -= w * float64(a) / 2
	d.Dot = fixed.P(int(math.Round(x)), int(math.Round(y)))
	d.DrawString(s)
}
