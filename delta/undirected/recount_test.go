package undirected

import (
	"math/rand/v2"
	"runtime"
	"slices"
	"testing"

	"orbitwatch/delta"
)

// TestRecountGraphlets recounts each 4-node graphlet on its own. The
// expected vectors are worked out by hand from the orbit definitions
// (Pržulj 2007 numbering): every 4-node orbit a node holds appears once,
// plus the 3-node subgraphs it lies in.
func TestRecountGraphlets(t *testing.T) {
	type row = [maxOrbits]uint64
	cases := []struct {
		name  string
		edges [][2]uint32
		want  []row
	}{
		{"4-path 0-1-2-3", [][2]uint32{{0, 1}, {1, 2}, {2, 3}}, []row{
			{1, 1, 0, 0, 1},
			{2, 1, 1, 0, 0, 1},
			{2, 1, 1, 0, 0, 1},
			{1, 1, 0, 0, 1},
		}},
		{"3-star centre 0", [][2]uint32{{0, 1}, {0, 2}, {0, 3}}, []row{
			{3, 0, 3, 0, 0, 0, 0, 1},
			{1, 2, 0, 0, 0, 0, 1},
			{1, 2, 0, 0, 0, 0, 1},
			{1, 2, 0, 0, 0, 0, 1},
		}},
		{"4-cycle", [][2]uint32{{0, 1}, {1, 2}, {2, 3}, {3, 0}}, []row{
			{2, 2, 1, 0, 0, 0, 0, 0, 1},
			{2, 2, 1, 0, 0, 0, 0, 0, 1},
			{2, 2, 1, 0, 0, 0, 0, 0, 1},
			{2, 2, 1, 0, 0, 0, 0, 0, 1},
		}},
		{"tailed triangle 012 + 0-3", [][2]uint32{{0, 1}, {1, 2}, {2, 0}, {0, 3}}, []row{
			{3, 0, 2, 1, 0, 0, 0, 0, 0, 0, 0, 1},
			{2, 1, 0, 1, 0, 0, 0, 0, 0, 0, 1},
			{2, 1, 0, 1, 0, 0, 0, 0, 0, 0, 1},
			{1, 2, 0, 0, 0, 0, 0, 0, 0, 1},
		}},
		{"diamond without 2-3", [][2]uint32{{0, 1}, {0, 2}, {0, 3}, {1, 2}, {1, 3}}, []row{
			{3, 0, 1, 2, 0, 0, 0, 0, 0, 0, 0, 0, 0, 1},
			{3, 0, 1, 2, 0, 0, 0, 0, 0, 0, 0, 0, 0, 1},
			{2, 2, 0, 1, 0, 0, 0, 0, 0, 0, 0, 0, 1},
			{2, 2, 0, 1, 0, 0, 0, 0, 0, 0, 0, 0, 1},
		}},
		{"K4", [][2]uint32{{0, 1}, {0, 2}, {0, 3}, {1, 2}, {1, 3}, {2, 3}}, []row{
			{3, 0, 0, 3, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 1},
			{3, 0, 0, 3, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 1},
			{3, 0, 0, 3, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 1},
			{3, 0, 0, 3, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 1},
		}},
	}
	for _, tc := range cases {
		g := graphOf(4, tc.edges)
		want := delta.NewVectors(4, maxOrbits)
		for x, r := range tc.want {
			copy(want.Row(uint32(x)), r[:])
		}
		mustEqual(t, tc.name+" recount", NewRecounter(4).Recount(g), want)
		mustEqual(t, tc.name+" enumerate", enumerate(g, 4), want)
	}
}

// TestRecountRandom holds the recount against the brute-force enumeration
// on random graphs from sparse to dense, for every supported size.
func TestRecountRandom(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	for trial := range 40 {
		n := 5 + rng.IntN(26)
		p := []float64{0.08, 0.2, 0.4, 0.7, 0.95}[trial%5]
		g := randomGraph(rng, n, p)
		for _, k := range []int{2, 3, 4} {
			mustEqual(t, "recount vs enumerate", NewRecounter(k).Recount(g), enumerate(g, k))
		}
	}
}

// TestRecountDeterministic checks that the result does not depend on the
// number of goroutines, on a graph big enough to split across them.
func TestRecountDeterministic(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	g := barabasiAlbert(rng, 5000, 4)
	for i := range 300 {
		u, v := randomPair(rng, 5000)
		if !g.HasEdge(u, v) && i%3 == 0 {
			g.Link(u, v)
		}
	}
	many := NewRecounter(4).Recount(g)
	prev := runtime.GOMAXPROCS(1)
	one := NewRecounter(4).Recount(g)
	runtime.GOMAXPROCS(max(prev, 4))
	four := NewRecounter(4).Recount(g)
	runtime.GOMAXPROCS(prev)
	mustEqual(t, "one goroutine vs default", one, many)
	mustEqual(t, "four goroutines vs default", four, many)
}

// TestCountCommon checks both intersection strategies (merge and binary
// search) against a set count on random ascending slices.
func TestCountCommon(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	for trial := range 200 {
		sizes := [2]int{rng.IntN(40), rng.IntN(40)}
		if trial%2 == 0 {
			sizes[1] = 17*sizes[0] + rng.IntN(50)
		}
		var s [2][]uint32
		in := map[uint32]int{}
		for i := range s {
			seen := map[uint32]bool{}
			for len(s[i]) < sizes[i] {
				v := uint32(rng.IntN(4 * (sizes[0] + sizes[1] + 1)))
				if !seen[v] {
					seen[v] = true
					s[i] = append(s[i], v)
					in[v]++
				}
			}
			slices.Sort(s[i])
		}
		want := 0
		for _, k := range in {
			if k == 2 {
				want++
			}
		}
		if got := countCommon(s[0], s[1]); got != want {
			t.Fatalf("trial %d: countCommon %d, want %d", trial, got, want)
		}
		if got := countCommon(s[1], s[0]); got != want {
			t.Fatalf("trial %d swapped: countCommon %d, want %d", trial, got, want)
		}
	}
}
