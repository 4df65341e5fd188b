package directed

import (
	"fmt"
	"math/rand/v2"
	"testing"

	"orbitwatch/delta"
	"orbitwatch/delta/brute"
)

// randomDigraph returns a seeded random digraph on n nodes: each ordered
// pair is an arc with probability p.
func randomDigraph(n int, p float64, seed uint64) *delta.Graph {
	rng := rand.New(rand.NewPCG(seed, 5))
	g := delta.NewGraph(delta.Directed)
	g.Grow(n)
	for u := range uint32(n) {
		for v := range uint32(n) {
			if u != v && rng.Float64() < p {
				g.Link(u, v)
			}
		}
	}
	return g
}

// tuplePattern counts, the slow obvious way, the tuples (x, y1, …) of
// distinct nodes whose pairs on orbit o's pattern edges have exactly the
// pattern's types: N_o(x) as equations.go defines it.
func tuplePattern(g *delta.Graph, eq *equations, o int, x uint32) int64 {
	p := eq.patterns[o]
	fam := families[p.fam]
	n := uint32(g.NumNodes())
	tuple := []uint32{x}
	var count int64
	var grow func()
	grow = func() {
		if len(tuple) == fam.k {
			for i, e := range fam.edges {
				a, b := tuple[e[0]], tuple[e[1]]
				var t uint8
				if g.HasEdge(a, b) {
					t |= tOut
				}
				if g.HasEdge(b, a) {
					t |= tIn
				}
				if t != p.params[i] {
					return
				}
			}
			count++
			return
		}
		for y := range n {
			used := false
			for _, z := range tuple {
				used = used || z == y
			}
			if !used {
				tuple = append(tuple, y)
				grow()
				tuple = tuple[:len(tuple)-1]
			}
		}
	}
	grow()
	return count
}

// TestEquationsHoldOnTuples checks the coefficients on their definition:
// on random digraphs, for every node x and orbit o, the pattern count
// N_o(x) counted on tuples equals Σ_o′ A[o][o′]·o′(x) with the orbit counts
// of delta/brute, and solve recovers brute's counts from the tuple counts.
// A matrix with one coefficient changed fails (the second half).
func TestEquationsHoldOnTuples(t *testing.T) {
	for _, k := range []int{3, 4} {
		eq := equationsFor(k)
		for seed := range uint64(3) {
			g := randomDigraph(7, 0.3, seed)
			want := brute.Count(g, eq.cat)
			for x := range uint32(g.NumNodes()) {
				n := make([]int64, eq.cat.NumOrbits())
				for o := range n {
					n[o] = tuplePattern(g, eq, o, x)
				}
				if err := checkCombination(eq, n, want, x); err != nil {
					t.Fatalf("k=%d seed %d: %v", k, seed, err)
				}
				if err := eq.solve(n, x); err != nil {
					t.Fatalf("k=%d seed %d: %v", k, seed, err)
				}
				for o, v := range n {
					if uint64(v) != want.Get(x, o) {
						t.Fatalf("k=%d seed %d node %d orbit %d: solved %d, brute %d", k, seed, x, o, v, want.Get(x, o))
					}
				}
			}
		}
	}
	// A coefficient off by one must be caught by the same check.
	eq := *equationsFor(3)
	eq.col = append([][]entry(nil), eq.col...)
	for o, col := range eq.col {
		if len(col) > 0 {
			eq.col[o] = append([]entry{{col[0].row, col[0].coef + 1}}, col[1:]...)
			break
		}
	}
	caught := false
	for seed := range uint64(3) {
		g := randomDigraph(7, 0.3, seed)
		want := brute.Count(g, eq.cat)
		for x := range uint32(g.NumNodes()) {
			n := make([]int64, eq.cat.NumOrbits())
			for o := range n {
				n[o] = tuplePattern(g, &eq, o, x)
			}
			caught = caught || checkCombination(&eq, n, want, x) != nil
		}
	}
	if !caught {
		t.Fatal("a wrong coefficient passed the check")
	}
}

// checkCombination returns an error when some N_o(x) differs from
// Σ_o′ A[o][o′]·o′(x).
func checkCombination(eq *equations, n []int64, want *delta.Vectors, x uint32) error {
	sum := make([]int64, len(n))
	for o := range n {
		sum[o] += eq.diag[o] * int64(want.Get(x, o))
		for _, e := range eq.col[o] {
			sum[e.row] += e.coef * int64(want.Get(x, o))
		}
	}
	for o := range n {
		if sum[o] != n[o] {
			return fmt.Errorf("node %d orbit %d: tuples %d, Σ A·brute %d", x, o, n[o], sum[o])
		}
	}
	return nil
}

// TestFamiliesCoverCatalog: every orbit is in exactly one family, with
// the family sizes our enumeration gives (all of them from the catalog;
// the totals 33 and 730 are DESIGN.md §6's).
func TestFamiliesCoverCatalog(t *testing.T) {
	eq := equationsFor(4)
	total := 0
	for f := range numFamilies {
		total += len(eq.byFamily[f])
		if len(eq.byFamily[f]) == 0 {
			t.Errorf("family %d has no orbit", f)
		}
	}
	if total != 730 || eq.cat.NumOrbits() != 730 || equationsFor(3).cat.NumOrbits() != 33 {
		t.Fatalf("families hold %d orbits, catalog %d", total, eq.cat.NumOrbits())
	}
	for o, d := range eq.diag {
		if d < 1 || d > 6 {
			t.Errorf("orbit %d: diagonal %d outside 1..(k−1)!", o, d)
		}
	}
}
