package alert

import (
	"math"

	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/stat"
)

// Distance returns the GDV distance between a node's vector u and its
// baseline v with orbit weights w (see Weights), in [0, 1]:
//
//	D_i = |log(u_i+1) − log(v_i+1)| / log(max(u_i, v_i) + 2)
//	D   = Σ w_i·D_i / Σ w_i
//
// the signature distance of Milenković & Pržulj 2008 (as recalled from
// memory; the paper reports the similarity 1 − D). Each D_i is below 1
// because |log(u+1) − log(v+1)| ≤ log(max(u,v)+1); the log scale makes a
// change from 10 to 100 count about as much as one from 1000 to 10000, so
// a hub's routine growth does not drown a small account's role change.
// The per-orbit terms w_i·D_i are left in contrib. All slices must have
// the same length; v may hold fractions (a decayed average).
func Distance(u []uint64, v, w, contrib []float64) float64 {
	if len(v) != len(u) || len(w) != len(u) || len(contrib) != len(u) {
		panic("alert: Distance of slices of different lengths")
	}
	for i, x := range u {
		a, b := float64(x), v[i]
		if a == b { // most orbits of a sparse vector: zero on both sides
			contrib[i] = 0
			continue
		}
		contrib[i] = math.Abs(math.Log1p(a)-math.Log1p(b)) / math.Log(math.Max(a, b)+2)
	}
	d := stat.Mean(contrib, w)
	floats.Mul(contrib, w)
	return d
}
