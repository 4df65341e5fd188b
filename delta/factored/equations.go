package factored

import (
	"fmt"
	"math/bits"
	"sync"

	"orbitwatch/delta"
	"orbitwatch/delta/catalog"
)

// maxOrbits is the orbit count of undirected graphlets on 2–4 nodes.
const maxOrbits = 15

// overlap[p][o] is the number of spanning connected edge subsets of the
// graphlet of orbit o, taken at a node in orbit o, that form the graphlet
// of orbit p with that node in orbit p. A node's non-induced count of
// pattern p (copies of p's graphlet as a subgraph, not necessarily induced,
// with the node at p) is therefore
//
//	N_p(x) = Σ_o overlap[p][o] · o_o(x),
//
// because every copy lies on a node set whose induced subgraph is exactly
// one graphlet. A proper subset has fewer edges, and the catalog numbers
// graphlets by edge count, so overlap is upper triangular with a unit
// diagonal and the system is solved from orbit 14 down (Hočevar & Demšar
// 2014 solve the same kind of system).
type overlap [maxOrbits][maxOrbits]int64

// equations returns the overlap matrix of the undirected catalog on 2–4
// nodes, computed once.
var equations = sync.OnceValue(func() *overlap {
	cat, err := catalog.New(delta.Undirected, 4)
	if err != nil {
		panic("factored: " + err.Error())
	}
	if cat.NumOrbits() != maxOrbits {
		panic(fmt.Sprintf("factored: catalog has %d orbits, want %d", cat.NumOrbits(), maxOrbits))
	}
	var a overlap
	for _, h := range cat.Graphlets {
		code := catalog.Code(delta.Undirected, h.Edges)
		seen := [maxOrbits]bool{}
		for x, o := range h.Orbits {
			if seen[o] {
				continue
			}
			seen[o] = true
			// Every submask of code is an edge subset; Lookup on all
			// h.Nodes positions is connected only when it spans them.
			for sub := code; ; sub = (sub - 1) & code {
				if id, orbs := cat.Lookup(h.Nodes, sub); id >= 0 {
					a[orbs[x]][o]++
				}
				if sub == 0 {
					break
				}
			}
		}
	}
	for p := range maxOrbits {
		for o := range maxOrbits {
			if (p == o && a[p][o] != 1) || (p > o && a[p][o] != 0) {
				panic(fmt.Sprintf("factored: overlap[%d][%d] = %d breaks the triangular order", p, o, a[p][o]))
			}
		}
	}
	return &a
})

// solve turns the non-induced pattern counts n[0..k) of one node into its
// induced orbit counts in place, by back substitution
//
//	o_p = N_p − Σ_{o>p} overlap[p][o] · o_o,   p = k−1 … 0.
//
// A result below zero means the records are wrong (a bug or a broken
// Insert/Delete contract): solve reports the orbit and ok false, it never
// clamps. Every product and partial sum is at most N_p in a consistent
// state, so nothing overflows before that is seen.
func (a *overlap) solve(n []uint64) (orbit int, ok bool) {
	for p := len(n) - 1; p >= 0; p-- {
		v := n[p]
		for o := p + 1; o < len(n); o++ {
			hi, m := bits.Mul64(uint64(a[p][o]), n[o])
			if hi != 0 || m > v {
				return p, false
			}
			v -= m
		}
		n[p] = v
	}
	return 0, true
}
