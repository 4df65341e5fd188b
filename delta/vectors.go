package delta

import (
	"fmt"
	"math"
)

// Vectors holds the orbit vector (GDV) of every node: a nodes × orbits
// matrix of uint64 counts, stored row-major.
type Vectors struct {
	orbits int
	data   []uint64
}

// NewVectors returns all-zero vectors for n nodes of the given orbit count.
func NewVectors(n, orbits int) *Vectors {
	if orbits <= 0 {
		panic("delta: orbit count must be positive")
	}
	return &Vectors{orbits: orbits, data: make([]uint64, n*orbits)}
}

// NumOrbits returns the length of one vector.
func (v *Vectors) NumOrbits() int { return v.orbits }

// NumNodes returns the number of rows.
func (v *Vectors) NumNodes() int { return len(v.data) / v.orbits }

// Grow makes rows 0..n-1 exist, new ones all zero.
func (v *Vectors) Grow(n int) {
	if need := n * v.orbits; need > len(v.data) {
		if need <= cap(v.data) {
			v.data = v.data[:need]
		} else {
			d := make([]uint64, need, max(need, 2*cap(v.data)))
			copy(d, v.data)
			v.data = d
		}
	}
}

// Row returns node x's vector. The slice aliases the matrix.
func (v *Vectors) Row(x uint32) []uint64 {
	i := int(x) * v.orbits
	return v.data[i : i+v.orbits : i+v.orbits]
}

// Get returns count (x, o).
func (v *Vectors) Get(x uint32, o int) uint64 { return v.data[int(x)*v.orbits+o] }

// Set sets count (x, o).
func (v *Vectors) Set(x uint32, o int, c uint64) { v.data[int(x)*v.orbits+o] = c }

// Add adds d to count (x, o). A count that would go negative or pass
// 2^64−1 is an invariant violation: Add leaves the count as it was and
// returns a *CountError.
func (v *Vectors) Add(x uint32, o int, d int64) error {
	p := &v.data[int(x)*v.orbits+o]
	if d >= 0 {
		if *p > math.MaxUint64-uint64(d) {
			return &CountError{Node: x, Orbit: o, Count: *p, Delta: d}
		}
		*p += uint64(d)
		return nil
	}
	m := uint64(-d) // d = MinInt64 still gives 2^63 here
	if *p < m {
		return &CountError{Node: x, Orbit: o, Count: *p, Delta: d}
	}
	*p -= m
	return nil
}

// Equal reports whether two matrices hold the same counts, treating missing
// trailing rows as all zero.
func (v *Vectors) Equal(w *Vectors) bool {
	_, _, _, _, ok := v.FirstDiff(w)
	return ok
}

// FirstDiff returns the first (node, orbit) where v and w differ, with both
// counts; ok is true when they do not differ. Missing rows count as zero.
func (v *Vectors) FirstDiff(w *Vectors) (node uint32, orbit int, a, b uint64, ok bool) {
	if v.orbits != w.orbits {
		panic("delta: comparing vectors of different orbit counts")
	}
	n := max(len(v.data), len(w.data))
	for i := 0; i < n; i++ {
		var x, y uint64
		if i < len(v.data) {
			x = v.data[i]
		}
		if i < len(w.data) {
			y = w.data[i]
		}
		if x != y {
			return uint32(i / v.orbits), i % v.orbits, x, y, false
		}
	}
	return 0, 0, 0, 0, true
}

// Clone returns a deep copy.
func (v *Vectors) Clone() *Vectors {
	return &Vectors{orbits: v.orbits, data: append([]uint64(nil), v.data...)}
}

// CountError reports a count that would leave the uint64 range.
type CountError struct {
	Node  uint32
	Orbit int
	Count uint64
	Delta int64
}

func (e *CountError) Error() string {
	return fmt.Sprintf("orbit count invariant violated: node %d orbit %d count %d delta %d", e.Node, e.Orbit, e.Count, e.Delta)
}
