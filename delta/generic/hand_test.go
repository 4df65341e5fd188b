package generic

import (
	"testing"

	"orbitwatch/delta"
	"orbitwatch/delta/catalog"
)

// arcs returns the directed code of the listed arcs between tuple positions.
func arcs(pairs ...[2]int) uint32 {
	var c uint32
	for _, p := range pairs {
		c |= 1 << catalog.ArcBit(p[0], p[1])
	}
	return c
}

// edges returns the undirected code of the listed edges.
func edges(pairs ...[2]int) uint32 {
	var c uint32
	for _, p := range pairs {
		c |= 1 << catalog.PairBit(p[0], p[1])
	}
	return c
}

// orbitOf looks up the orbit of tuple position pos in the k-node graphlet
// with adjacency code code, failing the test if the code is disconnected.
func orbitOf(t *testing.T, cat *catalog.Catalog, k int, code uint32, pos int) int {
	t.Helper()
	g, orbits := cat.Lookup(k, code)
	if g < 0 {
		t.Fatalf("code %#x on %d nodes is not connected", code, k)
	}
	return int(orbits[pos])
}

// expect holds the whole expected matrix: want[x] maps orbit → count, every
// other count must be zero.
func expect(t *testing.T, name string, vec *delta.Vectors, want []map[int]uint64) {
	t.Helper()
	w := delta.NewVectors(len(want), vec.NumOrbits())
	for x, row := range want {
		for o, c := range row {
			w.Set(uint32(x), o, c+w.Get(uint32(x), o))
		}
	}
	sameVectors(t, name, vec, w)
}

// bothEngines runs f with the enumerator and with the default engine.
func bothEngines(t *testing.T, cat *catalog.Catalog, f func(t *testing.T, s *state)) {
	for name, eng := range map[string]delta.Engine{"enumerator": NewEnumerator(cat), "engine": NewEngine(cat)} {
		t.Run(name, func(t *testing.T) { f(t, newState(t, eng)) })
	}
}

// TestDirectedByHand checks small digraphs whose orbit counts follow from
// the definitions: a node's count of orbit o is the number of connected
// induced subgraphs in which it holds a position of orbit o.
func TestDirectedByHand(t *testing.T) {
	cat := mustCatalog(t, delta.Directed, 3)
	payer := orbitOf(t, cat, 2, arcs([2]int{0, 1}), 0)
	payee := orbitOf(t, cat, 2, arcs([2]int{0, 1}), 1)
	recip := orbitOf(t, cat, 2, arcs([2]int{0, 1}, [2]int{1, 0}), 0)
	if payer == payee || recip == payer || recip == payee {
		t.Fatalf("2-node orbits not distinct: payer %d payee %d reciprocal %d", payer, payee, recip)
	}
	if o := orbitOf(t, cat, 2, arcs([2]int{0, 1}, [2]int{1, 0}), 1); o != recip {
		t.Fatalf("the two ends of a reciprocal pair are in orbits %d and %d; swapping them is an automorphism", recip, o)
	}
	cycle := arcs([2]int{0, 1}, [2]int{1, 2}, [2]int{2, 0})
	onCycle := orbitOf(t, cat, 3, cycle, 0)
	for p := 1; p < 3; p++ {
		if o := orbitOf(t, cat, 3, cycle, p); o != onCycle {
			t.Fatalf("3-cycle position %d in orbit %d, position 0 in %d; rotation is an automorphism", p, o, onCycle)
		}
	}
	bothEngines(t, cat, func(t *testing.T, s *state) {
		// One arc 0→1: {0,1} is a one-way arc, 0 pays, 1 is paid.
		s.apply(true, 0, 1)
		expect(t, "arc 0→1", s.vec, []map[int]uint64{{payer: 1}, {payee: 1}})
		// A repeated arc changes nothing in the simple graph.
		s.apply(true, 0, 1)
		expect(t, "arc 0→1 twice", s.vec, []map[int]uint64{{payer: 1}, {payee: 1}})
		// 1→0 as well: {0,1} becomes a reciprocal pair.
		s.apply(true, 1, 0)
		expect(t, "reciprocal pair", s.vec, []map[int]uint64{{recip: 1}, {recip: 1}})
		// Removing 0→1 once leaves its second copy: still reciprocal.
		s.apply(false, 0, 1)
		expect(t, "one copy of 0→1 removed", s.vec, []map[int]uint64{{recip: 1}, {recip: 1}})
		// Removing the last copy of 0→1 leaves only 1→0: 1 pays 0.
		s.apply(false, 0, 1)
		expect(t, "only 1→0 left", s.vec, []map[int]uint64{{payee: 1}, {payer: 1}})
		s.apply(false, 1, 0)
		expect(t, "empty", s.vec, []map[int]uint64{{}, {}})
		// Directed 3-cycle 0→1→2→0: each node pays one neighbour and is paid
		// by the other (two one-way pairs) and sits once on the 3-cycle.
		s.apply(true, 0, 1)
		s.apply(true, 1, 2)
		s.apply(true, 2, 0)
		row := map[int]uint64{payer: 1, payee: 1, onCycle: 1}
		expect(t, "3-cycle", s.vec, []map[int]uint64{row, row, row})
	})
}

// TestDirectedHubByHand checks an out-star: a payroll node 0 paying n
// employees 1..n. Each employee is paid once and is a leaf of the n−1
// induced out-stars {0, i, j}; the centre pays n times and is the centre of
// C(n,2) out-stars.
func TestDirectedHubByHand(t *testing.T) {
	cat := mustCatalog(t, delta.Directed, 3)
	star := arcs([2]int{0, 1}, [2]int{0, 2})
	centre, leaf := orbitOf(t, cat, 3, star, 0), orbitOf(t, cat, 3, star, 1)
	payer := orbitOf(t, cat, 2, arcs([2]int{0, 1}), 0)
	payee := orbitOf(t, cat, 2, arcs([2]int{0, 1}), 1)
	const n = 6
	bothEngines(t, cat, func(t *testing.T, s *state) {
		for i := uint32(1); i <= n; i++ {
			s.apply(true, 0, i)
		}
		want := []map[int]uint64{{payer: n, centre: n * (n - 1) / 2}}
		for i := 1; i <= n; i++ {
			want = append(want, map[int]uint64{payee: 1, leaf: n - 1})
		}
		expect(t, "out-star", s.vec, want)
	})
}

// TestDirectedRefundByHand checks an in-star, a merchant 0 paid by n
// consumers 1..n, before and after the merchant refunds consumer 1 (arc
// 0→1, making {0,1} a reciprocal pair). Before: the merchant is paid n
// times and is the centre of C(n,2) induced in-stars {0,i,j}; each consumer
// pays once and is a leaf of n−1 in-stars. After: the pair {0,1} is
// reciprocal; the n−1 sets {0,1,j} become the graphlet "reciprocal pair
// 0↔1 with j→0"; the C(n−1,2) sets {0,i,j} with i,j ≥ 2 stay in-stars.
func TestDirectedRefundByHand(t *testing.T) {
	cat := mustCatalog(t, delta.Directed, 3)
	in := arcs([2]int{1, 0}, [2]int{2, 0})
	centre, leaf := orbitOf(t, cat, 3, in, 0), orbitOf(t, cat, 3, in, 1)
	mixed := arcs([2]int{0, 1}, [2]int{1, 0}, [2]int{2, 0})
	mCentre, mPair, mPayer := orbitOf(t, cat, 3, mixed, 0), orbitOf(t, cat, 3, mixed, 1), orbitOf(t, cat, 3, mixed, 2)
	// The three positions have (out, in) degrees (1,2), (1,1), (1,0): no
	// automorphism maps one onto another.
	if mCentre == mPair || mPair == mPayer || mCentre == mPayer || centre == leaf {
		t.Fatalf("orbits that differ by degree share an id: %d %d %d, in-star %d %d", mCentre, mPair, mPayer, centre, leaf)
	}
	payer := orbitOf(t, cat, 2, arcs([2]int{0, 1}), 0)
	payee := orbitOf(t, cat, 2, arcs([2]int{0, 1}), 1)
	recip := orbitOf(t, cat, 2, arcs([2]int{0, 1}, [2]int{1, 0}), 0)
	const n = 5
	bothEngines(t, cat, func(t *testing.T, s *state) {
		for i := uint32(1); i <= n; i++ {
			s.apply(true, i, 0)
		}
		want := []map[int]uint64{{payee: n, centre: n * (n - 1) / 2}}
		for i := 1; i <= n; i++ {
			want = append(want, map[int]uint64{payer: 1, leaf: n - 1})
		}
		expect(t, "in-star", s.vec, want)
		s.apply(true, 0, 1)
		want = []map[int]uint64{
			{recip: 1, payee: n - 1, centre: (n - 1) * (n - 2) / 2, mCentre: n - 1},
			{recip: 1, mPair: n - 1},
		}
		for i := 2; i <= n; i++ {
			want = append(want, map[int]uint64{payer: 1, leaf: n - 2, mPayer: 1})
		}
		expect(t, "in-star with a refund", s.vec, want)
	})
}

// TestUndirectedCyclesByHand checks the 4-cycle on the 2–4 node catalog
// and the 5-cycle on the 2–5 node one. In the 4-cycle each node has 2
// edges, is the middle of 1 induced 3-path (its two neighbours) and an end
// of 2, and lies on the one 4-cycle. In the 5-cycle each node has 2 edges;
// of the 5 induced 3-paths it is the middle of 1 and an end of 2; the 5
// induced 4-paths are the cycle minus one node, so a node is an end of 2,
// an inner node of 2 and absent from 1; and it lies on the one 5-cycle.
func TestUndirectedCyclesByHand(t *testing.T) {
	path3 := edges([2]int{0, 1}, [2]int{1, 2})
	path4 := edges([2]int{0, 1}, [2]int{1, 2}, [2]int{2, 3})
	t.Run("4-cycle", func(t *testing.T) {
		cat := mustCatalog(t, delta.Undirected, 4)
		cyc := orbitOf(t, cat, 4, edges([2]int{0, 1}, [2]int{1, 2}, [2]int{2, 3}, [2]int{3, 0}), 0)
		row := map[int]uint64{orbitOf(t, cat, 2, edges([2]int{0, 1}), 0): 2,
			orbitOf(t, cat, 3, path3, 1): 1, orbitOf(t, cat, 3, path3, 0): 2, cyc: 1}
		bothEngines(t, cat, func(t *testing.T, s *state) {
			for i := uint32(0); i < 4; i++ {
				s.apply(true, i, (i+1)%4)
			}
			expect(t, "4-cycle", s.vec, []map[int]uint64{row, row, row, row})
		})
	})
	t.Run("5-cycle", func(t *testing.T) {
		cat := mustCatalog(t, delta.Undirected, 5)
		cyc := orbitOf(t, cat, 5, edges([2]int{0, 1}, [2]int{1, 2}, [2]int{2, 3}, [2]int{3, 4}, [2]int{4, 0}), 0)
		row := map[int]uint64{orbitOf(t, cat, 2, edges([2]int{0, 1}), 0): 2,
			orbitOf(t, cat, 3, path3, 1): 1, orbitOf(t, cat, 3, path3, 0): 2,
			orbitOf(t, cat, 4, path4, 0): 2, orbitOf(t, cat, 4, path4, 1): 2, cyc: 1}
		bothEngines(t, cat, func(t *testing.T, s *state) {
			for i := uint32(0); i < 5; i++ {
				s.apply(true, i, (i+1)%5)
			}
			expect(t, "5-cycle", s.vec, []map[int]uint64{row, row, row, row, row})
			// Removing one edge leaves the 5-path 1-2-3-4-0.
			s.apply(false, 0, 1)
			rec := NewRecounter(cat).Recount(s.g)
			sameVectors(t, "5-path after removing 0-1", s.vec, rec)
		})
	})
}
