package gdv_test

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"orbitwatch/delta/gdv"
)

// paperDistance is the formula of Milenković & Pržulj 2008 (as recalled,
// see Metric) in float64 throughout, written from the formula and sharing
// no code with the package.
func paperDistance(u, v []uint64, w []float64) float64 {
	num, den := 0.0, 0.0
	for i := range u {
		a, b := float64(u[i]), float64(v[i])
		d := math.Abs(math.Log(a+1)-math.Log(b+1)) / math.Log(math.Max(a, b)+2)
		num += w[i] * d
		den += w[i]
	}
	return num / den
}

func TestDistanceByHand(t *testing.T) {
	m := gdv.NewMetric([]float64{1, 0.5})
	sig := func(v ...uint64) []float32 { return m.Signature(nil, v) }
	terms := make([]float64, 2)
	// u = (3, 0), v = (1, 0): D_0 = ln(4/2)/ln(5) = 0.4307; D_1 = 0.
	// D = (1·0.4307 + 0.5·0)/1.5 = 0.2871. The factors are float32, so
	// agreement is to a few parts in 10^8, not to the last float64 bit.
	d := m.Distance(sig(3, 0), sig(1, 0), terms)
	want := math.Log(2) / math.Log(5) / 1.5
	if math.Abs(d-want) > 1e-7 || terms[0] != d || terms[1] != 0 {
		t.Fatalf("distance %v terms %v, want %v with all of it in orbit 0", d, terms, want)
	}
	if d := m.Distance(sig(5, 9), sig(5, 9), nil); d != 0 {
		t.Fatalf("distance of equal vectors %v", d)
	}
	// In exact arithmetic just below 1; the float32 factors may round it
	// to just above.
	if d := m.Distance(sig(1<<40, 1<<40), sig(0, 0), nil); d >= 1+1e-6 || d < 0.99 {
		t.Fatalf("distance of 2^40 from 0 is %v, want 1 within 1e-6 (or just below)", d)
	}
}

// TestDistanceMatchesFormula holds the float32 signatures against the
// formula in float64 on random heavy-tailed vectors, checks symmetry to
// the bit, that the terms add up to D in order, and that counts given as
// fractions give the same signature.
func TestDistanceMatchesFormula(t *testing.T) {
	r := rand.New(rand.NewPCG(3, 4))
	for _, n := range []int{1, 4, 15, 73} {
		w := make([]float64, n)
		for i := range w {
			w[i] = 0.05 + r.Float64()
		}
		m := gdv.NewMetric(w)
		u, v := make([]uint64, n), make([]uint64, n)
		terms := make([]float64, n)
		worst := 0.0
		for range 2000 {
			synthetic(r, u)
			synthetic(r, v)
			if r.IntN(4) == 0 {
				copy(v, u)
				v[r.IntN(n)] += uint64(r.IntN(3))
			}
			a, b := m.Signature(nil, u), m.Signature(nil, v)
			d := m.Distance(a, b, nil)
			worst = max(worst, math.Abs(d-paperDistance(u, v, w)))
			if back := m.Distance(b, a, nil); back != d {
				t.Fatalf("n=%d: D(u,v)=%v but D(v,u)=%v", n, d, back)
			}
			if dt := m.Distance(a, b, terms); dt != d {
				t.Fatalf("n=%d: D with terms %v, without %v", n, dt, d)
			}
			s := 0.0
			for _, x := range terms {
				s += x
			}
			if s != d {
				t.Fatalf("n=%d: terms add to %v, D is %v", n, s, d)
			}
			f := make([]float64, n)
			for i, c := range v {
				f[i] = float64(c)
			}
			if !slices.Equal(m.SignatureOf(nil, f), b) {
				t.Fatalf("n=%d: SignatureOf the counts as floats differs from Signature", n)
			}
			if bt := m.Between(u, f, terms); bt != d || s != d {
				t.Fatalf("n=%d: Between %v, Distance %v", n, bt, d)
			}
			// A decayed baseline: fractions, some orbits equal to u's.
			for i := range f {
				if r.IntN(3) == 0 {
					f[i] = float64(u[i])
				} else {
					f[i] = float64(v[i]) * r.Float64()
				}
			}
			want := m.Distance(a, m.SignatureOf(nil, f), nil)
			if bt := m.Between(u, f, nil); bt != want {
				t.Fatalf("n=%d: Between %v, Distance of signatures %v, for fractions", n, bt, want)
			}
			if !(d >= 0 && d < 1+1e-6) {
				t.Fatalf("n=%d: D=%v outside [0,1]", n, d)
			}
		}
		// float32 factors: 2^-24 relative each; the bound below is loose.
		if worst > 1e-6 {
			t.Errorf("n=%d: worst |D − formula| = %g, want ≤ 1e-6", n, worst)
		}
	}
}

func TestLargest(t *testing.T) {
	terms := []float64{0.1, 0, 0.3, 0.1, 0.2, 0.3}
	for _, c := range []struct {
		n    int
		want []int
	}{
		{0, []int{}},
		{1, []int{2}},
		{3, []int{2, 5, 4}},
		{10, []int{2, 5, 4, 0, 3}}, // orbit 1 is 0: not listed
	} {
		if got := gdv.Largest(terms, c.n); !slices.Equal(got, c.want) {
			t.Errorf("Largest(%v, %d) = %v, want %v", terms, c.n, got, c.want)
		}
	}
}

func TestDiffer(t *testing.T) {
	m := gdv.NewMetric([]float64{1, 1, 1, 1})
	// Orbit 0: 3 against 1, |ln 4 − ln 2|/ln 5 = 0.43; orbit 2: 0 against
	// 5, ln 6/ln 7 = 0.92; orbit 3: 7 against 8, ln(9/8)/ln 10 = 0.05;
	// orbit 1 equal.
	u, v := []uint64{3, 4, 0, 7}, []uint64{1, 4, 5, 8}
	if got := m.Differ(u, v, 2); !slices.Equal(got, []int{2, 0}) {
		t.Errorf("Differ(u, v, 2) = %v, want [2 0]", got)
	}
	if got := m.Differ(v, u, 9); !slices.Equal(got, []int{2, 0, 3}) {
		t.Errorf("Differ(v, u, 9) = %v, want [2 0 3]", got)
	}
}
