package signed

import (
	"fmt"
	"sync"

	"orbitwatch/delta"
	"orbitwatch/delta/catalog"
)

// numOrbits is the length of a signed 2–3 node vector.
const numOrbits = 15

// layout holds the catalog ids of the orbits by the sign pattern at the
// node, looked up in delta/catalog (never typed in). Index 0 is positive,
// 1 negative; m counts the negative ties among the node's two.
type layout struct {
	tie [2]int    // 2 nodes: end of a tie of sign a
	end [2][2]int // 3-path end: own tie sign a, the far tie sign b
	mid [3]int    // 3-path middle with m negative ties
	tri [3][2]int // triangle: m negative ties at the node, facing tie sign s
}

var orbits = sync.OnceValue(func() *layout {
	cat, err := catalog.New(delta.Signed, 3)
	if err != nil {
		panic("signed: " + err.Error())
	}
	l := &layout{}
	orbit := func(k int, edges [][2]int, neg []bool) int {
		gid, o := cat.Lookup(k, catalog.SignedCode(edges, neg))
		if gid < 0 {
			panic("signed: a sign pattern the catalog does not classify")
		}
		return int(o[0]) // the node counted is always position 0
	}
	for a := range 2 {
		l.tie[a] = orbit(2, [][2]int{{0, 1}}, []bool{a == 1})
		for b := range 2 {
			l.end[a][b] = orbit(3, [][2]int{{0, 1}, {1, 2}}, []bool{a == 1, b == 1})
		}
	}
	for m := range 3 {
		l.mid[m] = orbit(3, [][2]int{{0, 1}, {0, 2}}, []bool{m >= 1, m == 2})
		for s := range 2 {
			l.tri[m][s] = orbit(3, [][2]int{{0, 1}, {0, 2}, {1, 2}}, []bool{m >= 1, m == 2, s == 1})
		}
	}
	seen := map[int]bool{}
	for _, o := range append(append(append(l.tie[:], l.end[0][:]...), l.end[1][:]...), append(l.mid[:], l.tri[0][0], l.tri[0][1], l.tri[1][0], l.tri[1][1], l.tri[2][0], l.tri[2][1])...) {
		seen[o] = true
	}
	if len(seen) != numOrbits || cat.NumOrbits() != numOrbits {
		panic(fmt.Sprintf("signed: %d sign patterns for %d orbits", len(seen), cat.NumOrbits()))
	}
	return l
})

// local is what one node's vector is derived from: its signed degrees
// d[a], its triangles tri[m][s], and s[a][b] = Σ d_b(y) over the
// neighbours y joined to it by a tie of sign a.
type local struct {
	d   [2]int64
	tri [3][2]int64
	s   [2][2]int64
}

// vector derives the 15 orbit counts into dst[:15]:
//
//	tie(a)    = d_a
//	mid(m)    = C(d_+,2), d_+·d_−, C(d_−,2) minus the triangles with m
//	            negative ties at the node (m = 0, 1, 2)
//	end(a,b)  = s[a][b] − [a = b]·d_a − Σ_m n_a(m)·tri[m][b]
//
// where end(a,b) counts the paths x–y–z with x–y of sign a and y–z of
// sign b (z ≠ x, z not adjacent to x): s[a][b] counts the walks, [a = b]·d_a
// those that come back to x, and a triangle with m negative ties at x and
// the far tie of sign b closes n_a(m) of them (n_−(m) = m, n_+(m) = 2 − m).
// A count below zero means records that contradict each other.
func (q *local) vector(x uint32, dst []uint64) ([]uint64, error) {
	l := orbits()
	dst = append(dst[:0], make([]uint64, numOrbits)...)
	var v [numOrbits]int64
	d := q.d
	for a := range 2 {
		v[l.tie[a]] = d[a]
		for b := range 2 {
			e := q.s[a][b]
			if a == b {
				e -= d[a]
			}
			for m := range 3 {
				n := int64(m)
				if a == 0 {
					n = int64(2 - m)
				}
				e -= n * q.tri[m][b]
			}
			v[l.end[a][b]] = e
		}
	}
	pairs := [3]int64{d[0] * (d[0] - 1) / 2, d[0] * d[1], d[1] * (d[1] - 1) / 2}
	for m := range 3 {
		v[l.mid[m]] = pairs[m] - q.tri[m][0] - q.tri[m][1]
		for s := range 2 {
			v[l.tri[m][s]] = q.tri[m][s]
		}
	}
	for o, n := range v {
		if n < 0 {
			return nil, fmt.Errorf("signed: node %d: orbit %d solves to %d: records contradict each other", x, o, n)
		}
		dst[o] = uint64(n)
	}
	return dst, nil
}
