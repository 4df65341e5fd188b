package plot

import (
	"math"
	"strconv"
	"time"
)

// scale maps data values to pixels along one axis, p0 for the low end and
// p1 for the high end (p0 > p1 on a y axis, which grows upwards).
//
// Linear: px = p0 + (v−lo)/(hi−lo)·(p1−p0). Log: the same on log10 v, with
// lo and hi whole decades; when the data hold zeros (or negatives, which a
// count never is) a band of floorBand pixels is kept at p0 for them and
// labelled 0, and the decades start beyond it.
type scale struct {
	lo, hi float64 // data range (log: decade exponents)
	log    bool
	floor  bool // log scale with a zero band
	p0, p1 float64
}

const floorBand = 18

func newScale(vals [][]float64, log, zeroBase bool, p0, p1 float64) scale {
	lo, hi := math.Inf(1), math.Inf(-1)
	posLo, posHi := math.Inf(1), math.Inf(-1)
	nonPos := false
	for _, vs := range vals {
		for _, v := range vs {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				continue
			}
			lo, hi = math.Min(lo, v), math.Max(hi, v)
			if v > 0 {
				posLo, posHi = math.Min(posLo, v), math.Max(posHi, v)
			} else {
				nonPos = true
			}
		}
	}
	s := scale{log: log, p0: p0, p1: p1}
	if log {
		s.floor = nonPos || zeroBase
		if math.IsInf(posLo, 1) {
			posLo, posHi = 1, 10
		}
		s.lo, s.hi = math.Floor(math.Log10(posLo)), math.Ceil(math.Log10(posHi))
		if zeroBase {
			s.lo = math.Min(s.lo, 0)
		}
		if s.hi <= s.lo {
			s.hi = s.lo + 1
		}
		return s
	}
	if math.IsInf(lo, 1) {
		lo, hi = 0, 1
	}
	if zeroBase {
		lo, hi = math.Min(lo, 0), math.Max(hi, 0)
	}
	if hi == lo {
		lo, hi = lo-1, hi+1
	}
	step := niceStep(hi - lo)
	s.lo, s.hi = math.Floor(lo/step)*step, math.Ceil(hi/step)*step
	return s
}

// niceStep returns the step of 1, 2 or 5 times a power of ten that cuts
// span into about 5 to 10 parts.
func niceStep(span float64) float64 {
	raw := span / 6
	mag := math.Pow(10, math.Floor(math.Log10(raw)))
	for _, f := range []float64{1, 2, 5} {
		if f*mag >= raw {
			return f * mag
		}
	}
	return 10 * mag
}

// px returns the pixel of v; NaN for a value the scale cannot show.
func (s scale) px(v float64) float64 {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return math.NaN()
	}
	if !s.log {
		return s.p0 + (v-s.lo)/(s.hi-s.lo)*(s.p1-s.p0)
	}
	q0 := s.p0
	if s.floor {
		q0 += math.Copysign(floorBand, s.p1-s.p0)
		if v <= 0 {
			return s.p0
		}
	} else if v <= 0 {
		return math.NaN()
	}
	return q0 + (math.Log10(v)-s.lo)/(s.hi-s.lo)*(s.p1-q0)
}

type tick struct {
	v     float64
	label string
}

// ticks returns the labelled ticks of a numeric scale: every decade (log;
// every other one when there are more than 10), or every niceStep
// (linear), plus 0 on a floor band.
func (s scale) ticks() []tick {
	var ts []tick
	if s.log {
		if s.floor {
			ts = append(ts, tick{0, "0"})
		}
		every := math.Ceil((s.hi - s.lo) / 10)
		for e := s.lo; e <= s.hi; e += every {
			ts = append(ts, tick{math.Pow(10, e), number(math.Pow(10, e))})
		}
		return ts
	}
	step := niceStep(s.hi - s.lo)
	for i := math.Ceil(s.lo / step); i*step <= s.hi+step/2; i++ {
		ts = append(ts, tick{i * step, number(i * step)})
	}
	return ts
}

// number formats v shortly: 1500 → 1.5k, 2e6 → 2M, 0.25 → 0.25.
func number(v float64) string {
	a := math.Abs(v)
	for _, u := range []struct {
		f float64
		s string
	}{{1e12, "T"}, {1e9, "G"}, {1e6, "M"}, {1e3, "k"}} {
		if a >= u.f {
			return strconv.FormatFloat(v/u.f, 'g', 3, 64) + u.s
		}
	}
	return strconv.FormatFloat(v, 'g', 3, 64)
}

// timeSteps are the tick spacings of a time axis, in seconds.
var timeSteps = []float64{1, 2, 5, 10, 15, 30, 60, 120, 300, 600, 900, 1800,
	3600, 2 * 3600, 3 * 3600, 6 * 3600, 12 * 3600, 86400, 2 * 86400, 7 * 86400,
	14 * 86400, 30 * 86400, 91 * 86400, 365 * 86400}

// timeTicks returns ticks for a time axis over unix seconds lo..hi: the
// first spacing giving at most 8 ticks, at multiples of it since the Unix
// epoch (UTC), labelled by date when a tick is a day or more apart, else
// by clock time with the date before it on the first tick and wherever
// the date changes.
func timeTicks(lo, hi float64) []tick {
	step := timeSteps[len(timeSteps)-1]
	for _, st := range timeSteps {
		if (hi-lo)/st <= 8 {
			step = st
			break
		}
	}
	layout := "15:04"
	switch {
	case step < 60:
		layout = "15:04:05"
	case step >= 86400:
		layout = "Jan 2"
	}
	var ts []tick
	lastDay := ""
	for v := math.Ceil(lo/step) * step; v <= hi; v += step {
		sec, frac := math.Modf(v)
		t := time.Unix(int64(sec), int64(frac*1e9)).UTC()
		label := t.Format(layout)
		if day := t.Format("Jan 2"); step < 86400 && day != lastDay {
			label, lastDay = day+" "+label, day
		}
		ts = append(ts, tick{v, label})
	}
	return ts
}
