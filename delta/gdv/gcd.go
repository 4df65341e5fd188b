package gdv

import (
	"cmp"
	"fmt"
	"math"
	"slices"
	"sync"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat"

	"orbitwatch/delta"
)

// GCD11Orbits returns the orbits of GCD-11 in the published numbering of
// the 2–4 node catalog (Pržulj 2007): 0, 1, 2, 4, 5, 6, 7, 8, 9, 10, 11.
// Yaveroğlu et al. 2014 drop orbits 3, 12, 13 and 14 as redundant (their
// counts follow from the others by the orbit equations) and show that the
// remaining 11 tell network models apart best; the list is recalled from
// memory of the paper, not checked against its text. The same numbers
// index the 2–5 node catalog, whose orbits 0–14 are the 2–4 node ones.
func GCD11Orbits() []int { return []int{0, 1, 2, 4, 5, 6, 7, 8, 9, 10, 11} }

// Profile summarises one orbit matrix for comparison with another: the
// Spearman correlation between every two of the chosen orbits across
// nodes (the graphlet correlation matrix of Yaveroğlu et al. 2014) and
// the distribution of every orbit's counts.
//
// Only nodes with a non-zero count somewhere are used: a node without
// edges at the cut is not part of the network then, and with a window
// the accounts that aged out would otherwise pile up as ties at zero.
//
// A Profile keeps every orbit's counts sorted (8 bytes per node and
// orbit) for the Kolmogorov–Smirnov statistic of Compare.
type Profile struct {
	// Nodes is the number of nodes used.
	Nodes int
	// Orbits are the correlated orbits; Corr is their Spearman
	// correlation matrix, row-major, len(Orbits)² entries.
	Orbits []int
	Corr   []float64
	// Constant marks, per entry of Orbits, an orbit whose count is the
	// same at every node used (always so with fewer than two nodes).
	// Its correlation with any other orbit is undefined (0/0); Corr holds
	// 0 there. See NewProfile.
	Constant []bool
	// Dists describe every orbit of the matrix, indexed by orbit.
	Dists []Dist

	sorted [][]float64 // per orbit, the counts of the nodes used, ascending
}

// Dist describes one orbit's counts over the nodes of a Profile.
type Dist struct {
	Orbit int
	// NonZero is the share of nodes with a non-zero count (0 without nodes).
	NonZero float64
	// P50, P90 and P99 are empirical quantiles (stat.Quantile with
	// stat.Empirical: the least count c with at least the fraction p of
	// nodes at or below c), and Max the largest count; all 0 without nodes.
	P50, P90, P99, Max float64
}

// NewProfile returns the Profile of the orbit matrix v (one row per node;
// rows of all zeros are left out) over the correlated orbits (for GCD-11,
// GCD11Orbits()), which must be distinct columns of v.
//
// Spearman's ρ is Pearson's correlation of ranks, ranks of tied counts
// averaged (the usual definition, and what scipy.stats.spearmanr does).
// gonum's stat package (v0.17) has Pearson's (Correlation,
// CorrelationMatrix) and Kendall's τ but no Spearman and no ranking, so
// the ranks are made here and stat.CorrelationMatrix correlates them.
//
// The rule for constant orbits: an orbit with the same count at every
// node (no triangle anywhere, say) has no ranks to correlate, so its
// correlation with every other orbit is set to 0, "no monotone relation",
// and it is flagged in Constant. Between two networks that both lack it
// the orbit then adds nothing to the distance; where one network has it
// and the other not, the distance counts the other network's
// correlations in full. As we recall (from memory, unchecked) the
// authors instead add a dummy node with every count 1; that shifts every
// correlation a little and still leaves an orbit that is 1 everywhere
// undefined, so it is not done here.
func NewProfile(v *delta.Vectors, orbits []int) (*Profile, error) {
	width := v.NumOrbits()
	seen := make(map[int]bool)
	for _, o := range orbits {
		if o < 0 || o >= width {
			return nil, fmt.Errorf("gdv: orbit %d is not a column of a %d-orbit matrix", o, width)
		}
		if seen[o] {
			return nil, fmt.Errorf("gdv: orbit %d listed twice", o)
		}
		seen[o] = true
	}
	var rows []uint32
	for x := range v.NumNodes() {
		if slices.ContainsFunc(v.Row(uint32(x)), func(c uint64) bool { return c != 0 }) {
			rows = append(rows, uint32(x))
		}
	}
	p := &Profile{
		Nodes: len(rows), Orbits: slices.Clone(orbits),
		Constant: make([]bool, len(orbits)), Dists: make([]Dist, width),
		sorted: make([][]float64, width),
	}
	ranks := mat.NewDense(max(len(rows), 1), max(len(orbits), 1), nil)
	col := make(map[int]int, len(orbits)) // orbit → column of ranks
	for j, o := range orbits {
		col[o] = j
	}
	rankOf := make([][]float64, len(orbits))
	flat := make([]bool, width)
	scratch := make([][2][]entry, numWorkers())
	parallel(width, func(w, o int) {
		var dst []float64
		if j, ranked := col[o]; ranked {
			dst = make([]float64, len(rows))
			rankOf[j] = dst
		}
		p.sorted[o], p.Dists[o], flat[o] = column(v, rows, o, dst, &scratch[w])
	})
	if len(rows) > 0 {
		for j, r := range rankOf {
			ranks.SetCol(j, r)
		}
	}
	p.Corr = make([]float64, len(orbits)*len(orbits))
	for j, o := range orbits {
		p.Constant[j] = len(rows) < 2 || flat[o]
		p.Corr[j*len(orbits)+j] = 1
	}
	if len(rows) >= 2 && len(orbits) >= 2 {
		var c mat.SymDense
		stat.CorrelationMatrix(&c, ranks, nil)
		for i := range orbits {
			for j := i + 1; j < len(orbits); j++ {
				r := c.At(i, j)
				if p.Constant[i] || p.Constant[j] {
					r = 0
				}
				p.Corr[i*len(orbits)+j], p.Corr[j*len(orbits)+i] = r, r
			}
		}
	}
	return p, nil
}

// column sorts orbit o's counts over rows, describes them and reports
// whether they are all equal; with dst not nil it also leaves there each
// row's rank (1-based, ties averaged). scratch holds the caller's
// goroutine's sort buffers.
func column(v *delta.Vectors, rows []uint32, o int, dst []float64, scratch *[2][]entry) ([]float64, Dist, bool) {
	e := sortColumn(v, rows, o, scratch)
	sorted := make([]float64, len(e))
	zeros := 0
	for i := 0; i < len(e); {
		j := i + 1
		for j < len(e) && e[j].c == e[i].c {
			j++
		}
		// Positions i..j−1 hold one count: ranks i+1..j, averaged.
		r := float64(i+1+j) / 2
		for t := i; t < j; t++ {
			sorted[t] = float64(e[t].c)
			if dst != nil {
				dst[e[t].i] = r
			}
		}
		if e[i].c == 0 {
			zeros = j - i
		}
		i = j
	}
	d := Dist{Orbit: o}
	if n := len(sorted); n > 0 {
		d.NonZero = float64(n-zeros) / float64(n)
		d.P50 = stat.Quantile(0.5, stat.Empirical, sorted, nil)
		d.P90 = stat.Quantile(0.9, stat.Empirical, sorted, nil)
		d.P99 = stat.Quantile(0.99, stat.Empirical, sorted, nil)
		d.Max = sorted[n-1]
	}
	return sorted, d, len(e) == 0 || e[0].c == e[len(e)-1].c
}

type entry struct {
	c uint64 // count
	i uint32 // index into the rows used
}

// sortColumn returns orbit o's counts over rows with their row indexes,
// by count: a least-significant-digit radix sort, one counting pass per
// byte of the largest count (two or three for most orbits), several
// times faster than a comparison sort.
func sortColumn(v *delta.Vectors, rows []uint32, o int, scratch *[2][]entry) []entry {
	for i := range scratch {
		if len(scratch[i]) != len(rows) {
			scratch[i] = make([]entry, len(rows))
		}
	}
	e, tmp := scratch[0], scratch[1]
	var most uint64
	for i, x := range rows {
		e[i] = entry{v.Get(x, o), uint32(i)}
		most = max(most, e[i].c)
	}
	for shift := 0; shift < 64 && most>>shift != 0; shift += 8 {
		var at [257]int
		for _, x := range e {
			at[(x.c>>shift)&0xff+1]++
		}
		for d := 1; d < len(at); d++ {
			at[d] += at[d-1]
		}
		for _, x := range e {
			d := (x.c >> shift) & 0xff
			tmp[at[d]] = x
			at[d]++
		}
		e, tmp = tmp, e
	}
	return e
}

// parallel calls f(w, i) for i = 0..n−1, each once, on one goroutine per
// core; w numbers the goroutine, below numWorkers().
func parallel(n int, f func(w, i int)) {
	var wg sync.WaitGroup
	next := make(chan int, n)
	for i := range n {
		next <- i
	}
	close(next)
	for w := range min(n, numWorkers()) {
		wg.Go(func() {
			for i := range next {
				f(w, i)
			}
		})
	}
	wg.Wait()
}

// Drift is what changed between two Profiles a (before) and b (after).
type Drift struct {
	// GCD is the graphlet correlation distance: the Euclidean distance
	// between the upper triangles (diagonal excluded) of the two
	// correlation matrices, √Σ_{i<j} (a_ij − b_ij)².
	GCD float64
	// Pairs holds every orbit pair i<j, largest |After − Before| first,
	// ties in the order of the Profiles' orbits.
	Pairs []PairMove
	// Shifts holds one entry per orbit of the matrices, in orbit order.
	Shifts []Shift
}

// PairMove is the Spearman correlation of two orbits before and after.
type PairMove struct {
	A, B          int // orbits
	Before, After float64
}

// Shift is one orbit's distribution before and after, and KS, the
// two-sample Kolmogorov–Smirnov statistic (the largest gap between the two
// empirical CDFs, stat.KolmogorovSmirnov): 0 for the same distribution,
// 1 when the two share no range; 1 also when exactly one side has no
// nodes.
type Shift struct {
	Orbit         int
	Before, After Dist
	KS            float64
}

// Compare returns the Drift from a to b, which must have the same
// correlated orbits in the same order and the same matrix width.
func Compare(a, b *Profile) (Drift, error) {
	if !slices.Equal(a.Orbits, b.Orbits) {
		return Drift{}, fmt.Errorf("gdv: profiles over orbits %v and %v", a.Orbits, b.Orbits)
	}
	if len(a.Dists) != len(b.Dists) {
		return Drift{}, fmt.Errorf("gdv: profiles of %d- and %d-orbit matrices", len(a.Dists), len(b.Dists))
	}
	var d Drift
	k := len(a.Orbits)
	sq := 0.0
	for i := range k {
		for j := i + 1; j < k; j++ {
			x, y := a.Corr[i*k+j], b.Corr[i*k+j]
			sq += (x - y) * (x - y)
			d.Pairs = append(d.Pairs, PairMove{A: a.Orbits[i], B: a.Orbits[j], Before: x, After: y})
		}
	}
	d.GCD = math.Sqrt(sq)
	slices.SortStableFunc(d.Pairs, func(p, q PairMove) int {
		return cmp.Compare(math.Abs(q.After-q.Before), math.Abs(p.After-p.Before))
	})
	for o := range a.Dists {
		s := Shift{Orbit: o, Before: a.Dists[o], After: b.Dists[o]}
		s.KS = stat.KolmogorovSmirnov(a.sorted[o], nil, b.sorted[o], nil)
		d.Shifts = append(d.Shifts, s)
	}
	return d, nil
}
