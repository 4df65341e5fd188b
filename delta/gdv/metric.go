package gdv

import (
	"math"
	"slices"

	"orbitwatch/delta/catalog"
)

// Metric is the GDV signature distance of Milenković & Pržulj 2008 (as
// recalled from memory; the paper reports the similarity 1 − D) over one
// catalog's orbits with weights w_i:
//
//	D_i = |log(u_i+1) − log(v_i+1)| / log(max(u_i, v_i) + 2)
//	D   = Σ w_i·D_i / Σ w_i
//
// Each D_i is below 1 because |log(u+1) − log(v+1)| ≤ log(max(u,v)+1), so D
// is in [0, 1). The log scale makes a change from 10 to 100 count about as
// much as one from 1000 to 10000, so a hub's routine growth does not drown
// a small account's change of role.
//
// D is computed on signatures (see Signature): per orbit the pair
//
//	L_i = float32(log(x_i+1)),  W_i = float32((w_i/Σw) / log(x_i+2))
//
// and then, orbit by orbit in index order, in float64,
//
//	D = Σ |L_i(u) − L_i(v)| · min(W_i(u), W_i(v))
//
// which is the formula above because log(max(u,v)+2) = max(log(u+2),
// log(v+2)). Every caller (the alert rules, the nearest-signature index)
// goes through the same float32 factors and the same float64 sum in the
// same order, so they agree to the last bit; the float32 factors differ
// from the exact reals by a relative 2^-24 each, which moves D by less
// than 1e-6 (and can lift the D of a count near 2^40 against 0, just
// below 1 in exact arithmetic, to just above it).
//
// A Metric is read-only after NewMetric and safe for concurrent use.
type Metric struct {
	w []float64 // w_i / Σ w
	// log1p and log2 hold float32(log(x+1)) and log(x+2) for the small
	// whole counts, which most orbits of most nodes have: a table read
	// instead of two logarithms, and the same bits.
	log1p [smallCount]float32
	log2  [smallCount]float64
}

// smallCount bounds the counts whose logarithms are tabled (12 KiB per
// Metric).
const smallCount = 1024

// NewMetric returns the Metric with orbit weights w (see Weights). Every
// weight must be positive and finite, and there must be at least one.
func NewMetric(w []float64) *Metric {
	if len(w) == 0 {
		panic("gdv: NewMetric without weights")
	}
	sum := 0.0
	for _, x := range w {
		if !(x > 0) || math.IsInf(x, 1) {
			panic("gdv: NewMetric weight not positive and finite")
		}
		sum += x
	}
	m := &Metric{w: make([]float64, len(w))}
	for i, x := range w {
		m.w[i] = x / sum
	}
	for c := range smallCount {
		m.log1p[c] = float32(math.Log1p(float64(c)))
		m.log2[c] = math.Log(float64(c) + 2)
	}
	return m
}

// ForCatalog returns the Metric of cat's orbits with the weights of
// Weights(cat).
func ForCatalog(cat *catalog.Catalog) *Metric { return NewMetric(Weights(cat)) }

// NumOrbits returns the length of the count vectors the Metric compares.
func (m *Metric) NumOrbits() int { return len(m.w) }

// SignatureLen returns the length of a signature: two float32 per orbit.
func (m *Metric) SignatureLen() int { return 2 * len(m.w) }

// Signature writes the signature of the count vector v into dst (grown if
// too short) and returns it: L_i at 2i and W_i at 2i+1. v must have
// NumOrbits counts.
func (m *Metric) Signature(dst []float32, v []uint64) []float32 {
	if len(v) != len(m.w) {
		panic("gdv: Signature of a vector whose length differs from the orbit count")
	}
	dst = m.grow(dst)
	for i, c := range v {
		m.put(dst, i, float64(c))
	}
	return dst
}

// SignatureOf is Signature for counts that may hold fractions (a decayed
// average of counts). Every value must be ≥ 0.
func (m *Metric) SignatureOf(dst []float32, v []float64) []float32 {
	if len(v) != len(m.w) {
		panic("gdv: SignatureOf a vector whose length differs from the orbit count")
	}
	dst = m.grow(dst)
	for i, x := range v {
		if !(x >= 0) {
			panic("gdv: SignatureOf a negative or NaN count")
		}
		m.put(dst, i, x)
	}
	return dst
}

func (m *Metric) grow(dst []float32) []float32 {
	if n := 2 * len(m.w); cap(dst) >= n {
		return dst[:n]
	}
	return make([]float32, 2*len(m.w))
}

func (m *Metric) put(dst []float32, i int, x float64) {
	dst[2*i], dst[2*i+1] = m.pair(i, x)
}

// pair returns orbit i's L and W for count x. Every path from counts to a
// distance comes here, so a count gives the same bits whichever way it
// arrives.
func (m *Metric) pair(i int, x float64) (l, w float32) {
	if x < smallCount {
		if c := int(x); float64(c) == x {
			return m.log1p[c], float32(m.w[i] / m.log2[c])
		}
	}
	return float32(math.Log1p(x)), float32(m.w[i] / math.Log(x+2))
}

// Between returns Distance(Signature(u), SignatureOf(v), terms), to the
// bit, without making the signatures: an orbit whose counts are equal
// (most orbits of a sparse vector) adds an exact 0 either way, and here
// costs no logarithm. u is a node's counts, v a baseline that may hold
// fractions (≥ 0); terms may be nil.
func (m *Metric) Between(u []uint64, v []float64, terms []float64) float64 {
	if len(u) != len(m.w) || len(v) != len(u) || terms != nil && len(terms) != len(u) {
		panic("gdv: Between of vectors whose length differs from the orbit count")
	}
	s := 0.0
	for i, c := range u {
		t := 0.0
		if a, b := float64(c), v[i]; a != b {
			if !(b >= 0) {
				panic("gdv: Between a negative or NaN count")
			}
			la, wa := m.pair(i, a)
			lb, wb := m.pair(i, b)
			t = term(la, wa, lb, wb)
		}
		if terms != nil {
			terms[i] = t
		}
		s += t
	}
	return s
}

// Distance returns D between two signatures of this Metric and, when terms
// is not nil (length NumOrbits), leaves the per-orbit terms in it (they
// sum to D in index order; a term is 0 exactly where the counts agree).
func (m *Metric) Distance(a, b []float32, terms []float64) float64 {
	if len(a) != 2*len(m.w) || len(b) != len(a) {
		panic("gdv: Distance of signatures whose length differs from twice the orbit count")
	}
	if terms == nil {
		return sum(a, b, math.Inf(1))
	}
	if len(terms) != len(m.w) {
		panic("gdv: Distance terms length differs from the orbit count")
	}
	s := 0.0
	for i := range terms {
		terms[i] = term(a[2*i], a[2*i+1], b[2*i], b[2*i+1])
		s += terms[i]
	}
	return s
}

// sum returns D of signatures a and b of equal even length, or, as soon as
// the partial sum exceeds limit, that partial sum (the terms are ≥ 0 and
// rounding is monotone, so D > limit then too). It is the scan's inner
// loop; Distance's terms path adds the same terms in the same order.
func sum(a, b []float32, limit float64) float64 {
	b = b[:len(a)]
	s := 0.0
	for i := 0; i+1 < len(a); i += 2 {
		s += term(a[i], a[i+1], b[i], b[i+1])
		if s > limit {
			return s
		}
	}
	return s
}

// term is one orbit's |L(u) − L(v)|·min(W(u), W(v)). The conversion of
// the product to float64 stops a compiler from fusing it with the caller's
// addition (the Go spec allows fused multiply-add otherwise), so every
// architecture and every call site rounds the same way.
func term(la, wa, lb, wb float32) float64 {
	d := float64(la) - float64(lb)
	if d < 0 {
		d = -d
	}
	w := wa
	if wb < w {
		w = wb
	}
	return float64(d * float64(w))
}

// Differ returns the (at most) n orbits that differ most between the
// count vectors u and v: those with the largest terms of D(u, v), largest
// first, ties by lower orbit (see Largest).
func (m *Metric) Differ(u, v []uint64, n int) []int {
	terms := make([]float64, len(m.w))
	m.Distance(m.Signature(nil, u), m.Signature(nil, v), terms)
	return Largest(terms, n)
}

// Largest returns the indexes of the (at most) n largest positive terms,
// largest first, ties by lower index: the orbits that differ most.
func Largest(terms []float64, n int) []int {
	var out []int
	for i, t := range terms {
		if t > 0 {
			out = append(out, i)
		}
	}
	slices.SortStableFunc(out, func(x, y int) int {
		switch {
		case terms[x] > terms[y]:
			return -1
		case terms[x] < terms[y]:
			return 1
		}
		return 0
	})
	return out[:min(len(out), max(n, 0))]
}
