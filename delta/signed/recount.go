package signed

import (
	"github.com/RoaringBitmap/roaring/v2"

	"orbitwatch/delta"
)

type recounter struct{}

// NewRecounter returns the static signed 2–3 node recount, a code path
// separate from Counter: signed degrees from the bitmaps, every triangle
// listed once (u < v < w, w in N(u) ∩ N(v)) and credited to its three
// nodes by its sign pattern, the neighbour sums walked; then the orbit
// equations (local.vector). It panics on an unsigned graph or on records
// that do not solve, which would be a bug.
func NewRecounter() delta.Recounter { return recounter{} }

// Recount returns every node's 15 orbit counts in g.
func (recounter) Recount(g *delta.Graph) *delta.Vectors {
	if g.Kind() != delta.Signed {
		panic("signed: recount of a graph that is not Signed")
	}
	n := g.NumNodes()
	q := make([]local, n)
	sgn := func(x, y uint32) int {
		if g.Neg(x).Contains(y) {
			return 1
		}
		return 0
	}
	for x := range uint32(n) {
		neg := int64(g.Neg(x).GetCardinality())
		q[x].d = [2]int64{int64(g.Degree(x)) - neg, neg}
	}
	for u := range uint32(n) {
		it := g.Out(u).Iterator()
		for it.HasNext() {
			v := it.Next()
			if v < u {
				continue
			}
			suv := sgn(u, v)
			for a := range 2 {
				q[u].s[suv][a] += q[v].d[a]
				q[v].s[suv][a] += q[u].d[a]
			}
			common := roaring.And(g.Out(u), g.Out(v))
			ct := common.Iterator()
			for ct.HasNext() {
				w := ct.Next()
				if w < v {
					continue
				}
				suw, svw := sgn(u, w), sgn(v, w)
				q[u].tri[suv+suw][svw]++
				q[v].tri[suv+svw][suw]++
				q[w].tri[suw+svw][suv]++
			}
		}
	}
	vec := delta.NewVectors(n, numOrbits)
	var buf []uint64
	for x := range uint32(n) {
		var err error
		if buf, err = q[x].vector(x, buf); err != nil {
			panic(err.Error())
		}
		copy(vec.Row(x), buf)
	}
	return vec
}
