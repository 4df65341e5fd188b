package catalog

import (
	"fmt"
	"strings"
	"testing"

	"orbitwatch/delta"
)

// allPerms lists the permutations of 0..k−1 by simple recursion, a path
// separate from the gonum generator the catalog uses.
func allPerms(k int) [][]int {
	if k == 0 {
		return [][]int{{}}
	}
	var out [][]int
	for _, p := range allPerms(k - 1) {
		for at := 0; at <= len(p); at++ {
			q := append(append(append([]int{}, p[:at]...), k-1), p[at:]...)
			out = append(out, q)
		}
	}
	return out
}

// matrix is an adjacency matrix: m[i][j] for the arc i→j (both ways for
// undirected graphs).
type matrix [5][5]bool

func fromEdges(kind delta.Kind, edges [][2]int) matrix {
	var m matrix
	for _, e := range edges {
		m[e[0]][e[1]] = true
		if kind == delta.Undirected {
			m[e[1]][e[0]] = true
		}
	}
	return m
}

// fromCode decodes an adjacency code bit by bit from the documented layout.
func fromCode(kind delta.Kind, k int, code uint32) matrix {
	var m matrix
	for i := 0; i < k; i++ {
		for j := 0; j < k; j++ {
			if i == j {
				continue
			}
			var bit uint
			if kind == delta.Directed {
				bit = ArcBit(i, j)
			} else {
				bit = PairBit(i, j)
			}
			m[i][j] = code>>bit&1 != 0
		}
	}
	return m
}

// isomorphism reports whether sigma maps a onto b: a[i][j] == b[σi][σj].
func isomorphism(k int, a, b matrix, sigma []int) bool {
	for i := 0; i < k; i++ {
		for j := 0; j < k; j++ {
			if a[i][j] != b[sigma[i]][sigma[j]] {
				return false
			}
		}
	}
	return true
}

func weaklyConnected(k int, m matrix) bool {
	seen := []bool{true, false, false, false, false}
	stack := []int{0}
	for len(stack) > 0 {
		x := stack[len(stack)-1]
		stack = stack[:len(stack)-1]
		for y := 0; y < k; y++ {
			if !seen[y] && (m[x][y] || m[y][x]) {
				seen[y] = true
				stack = append(stack, y)
			}
		}
	}
	for i := 0; i < k; i++ {
		if !seen[i] {
			return false
		}
	}
	return true
}

var supported = []struct {
	kind delta.Kind
	max  int
	// perNodes[k] is the number of connected (di)graphs on k nodes:
	// OEIS A001349 (1, 1, 2, 6, 21 on 1..5 nodes) for graphs, OEIS A003085
	// (1, 2, 13, 199 on 1..4 nodes) for digraphs.
	perNodes []int
	// orbits: 15 and 73 from Pržulj 2007; 33 and 730 are our own
	// enumeration's totals (DESIGN.md §6), checked here for stability.
	orbits int
}{
	{delta.Undirected, 2, []int{0, 0, 1}, 1},
	{delta.Undirected, 3, []int{0, 0, 1, 2}, 4},
	{delta.Undirected, 4, []int{0, 0, 1, 2, 6}, 15},
	{delta.Undirected, 5, []int{0, 0, 1, 2, 6, 21}, 73},
	{delta.Directed, 2, []int{0, 0, 2}, 3},
	{delta.Directed, 3, []int{0, 0, 2, 13}, 33},
	{delta.Directed, 4, []int{0, 0, 2, 13, 199}, 730},
}

func TestCounts(t *testing.T) {
	for _, s := range supported {
		c, err := New(s.kind, s.max)
		if err != nil {
			t.Fatal(err)
		}
		got := make([]int, s.max+1)
		for _, g := range c.Graphlets {
			got[g.Nodes]++
		}
		if fmt.Sprint(got) != fmt.Sprint(s.perNodes) {
			t.Errorf("%v 2..%d: graphlets per node count %v, want %v", s.kind, s.max, got, s.perNodes)
		}
		if c.NumOrbits() != s.orbits {
			t.Errorf("%v 2..%d: %d orbits, want %d", s.kind, s.max, c.NumOrbits(), s.orbits)
		}
	}
}

func TestUnsupported(t *testing.T) {
	for _, a := range []struct {
		kind delta.Kind
		max  int
	}{{delta.Undirected, 1}, {delta.Undirected, 6}, {delta.Directed, 5}, {delta.Kind(9), 3}} {
		if _, err := New(a.kind, a.max); err == nil {
			t.Errorf("New(%v, %d) gave no error", a.kind, a.max)
		}
	}
}

// TestGraphletsAndOrbits checks every graphlet is connected, that no two
// are isomorphic, that ids are consistent, and that each orbit is exactly
// one automorphism class: positions in one orbit are mapped onto each
// other by some automorphism, positions in different orbits never are.
func TestGraphletsAndOrbits(t *testing.T) {
	for _, s := range supported {
		c, _ := New(s.kind, s.max)
		perms := map[int][][]int{}
		for k := 2; k <= s.max; k++ {
			perms[k] = allPerms(k)
		}
		for i, g := range c.Graphlets {
			if g.ID != i || len(g.Orbits) != g.Nodes {
				t.Fatalf("%v graphlet %d: id %d, %d orbit entries for %d nodes", s.kind, i, g.ID, len(g.Orbits), g.Nodes)
			}
			m := fromEdges(s.kind, g.Edges)
			if !weaklyConnected(g.Nodes, m) {
				t.Fatalf("%v graphlet %d (%s) is not connected", s.kind, i, g.Name)
			}
			if fromCode(s.kind, g.Nodes, g.Code) != m {
				t.Fatalf("%v graphlet %d: code %b does not match edges %v", s.kind, i, g.Code, g.Edges)
			}
			reach := map[[2]int]bool{}
			for _, p := range perms[g.Nodes] {
				if isomorphism(g.Nodes, m, m, p) {
					for x, y := range p {
						reach[[2]int{x, y}] = true
					}
				}
			}
			for x := 0; x < g.Nodes; x++ {
				for y := 0; y < g.Nodes; y++ {
					if same := g.Orbits[x] == g.Orbits[y]; same != reach[[2]int{x, y}] {
						t.Fatalf("%v graphlet %d (%s): positions %d, %d same orbit %v, automorphism maps one onto the other %v", s.kind, i, g.Name, x, y, same, !same)
					}
				}
				o := c.Orbits[g.Orbits[x]]
				if o.Graphlet != i || !contains(o.Positions, x) {
					t.Fatalf("%v orbit %d does not list graphlet %d position %d", s.kind, o.ID, i, x)
				}
			}
			for j := 0; j < i; j++ {
				h := c.Graphlets[j]
				if h.Nodes != g.Nodes || len(h.Edges) != len(g.Edges) {
					continue
				}
				for _, p := range perms[g.Nodes] {
					if isomorphism(g.Nodes, m, fromEdges(s.kind, h.Edges), p) {
						t.Fatalf("%v graphlets %d and %d are isomorphic", s.kind, j, i)
					}
				}
			}
		}
		for id, o := range c.Orbits {
			if o.ID != id || len(o.Positions) == 0 {
				t.Fatalf("%v orbit %d: id %d, positions %v", s.kind, id, o.ID, o.Positions)
			}
			if id > 0 && c.Orbits[id-1].Graphlet > o.Graphlet {
				t.Fatalf("%v orbits not grouped by graphlet at %d", s.kind, id)
			}
		}
	}
}

func contains(xs []int, x int) bool {
	for _, y := range xs {
		if y == x {
			return true
		}
	}
	return false
}

// TestLookup classifies every code of every size by a slow, separate
// route: decode the code by the documented bit layout, find every
// isomorphism onto every catalog graphlet, and demand exactly one graphlet
// matches and that every isomorphism carries position i to a position of
// the orbit Lookup reports.
func TestLookup(t *testing.T) {
	for _, s := range supported {
		c, _ := New(s.kind, s.max)
		for k := 2; k <= s.max; k++ {
			perms := allPerms(k)
			bits := k * (k - 1) / 2
			if s.kind == delta.Directed {
				bits *= 2
			}
			type cand struct {
				id int
				m  matrix
			}
			var cands []cand
			for _, g := range c.Graphlets {
				if g.Nodes == k {
					cands = append(cands, cand{g.ID, fromEdges(s.kind, g.Edges)})
				}
			}
			for code := uint32(0); code < 1<<bits; code++ {
				m := fromCode(s.kind, k, code)
				gid, orbits := c.Lookup(k, code)
				if !weaklyConnected(k, m) {
					if gid != -1 || orbits[0] != -1 {
						t.Fatalf("%v k=%d code %b: disconnected, Lookup gave %d %v", s.kind, k, code, gid, *orbits)
					}
					continue
				}
				matched := -1
				for _, cd := range cands {
					for _, p := range perms {
						if !isomorphism(k, m, cd.m, p) {
							continue
						}
						if matched >= 0 && matched != cd.id {
							t.Fatalf("%v k=%d code %b matches graphlets %d and %d", s.kind, k, code, matched, cd.id)
						}
						matched = cd.id
						for i := 0; i < k; i++ {
							if want := c.Graphlets[cd.id].Orbits[p[i]]; int(orbits[i]) != want {
								t.Fatalf("%v k=%d code %b position %d: Lookup orbit %d, isomorphism gives %d", s.kind, k, code, i, orbits[i], want)
							}
						}
					}
				}
				if matched != gid {
					t.Fatalf("%v k=%d code %b: Lookup graphlet %d, slow classification %d", s.kind, k, code, gid, matched)
				}
				for i := k; i < 5; i++ {
					if orbits[i] != -1 {
						t.Fatalf("%v k=%d code %b: orbit entry %d beyond the tuple is %d", s.kind, k, code, i, orbits[i])
					}
				}
			}
		}
	}
}

// TestPublishedNumbering checks orbits 0–14 against the description of
// Pržulj 2007 (Fig. 1 there; restated in DESIGN.md §6): for each orbit, the
// graphlet's node and edge counts, its maximum degree, and the degree of
// every position in the orbit.
func TestPublishedNumbering(t *testing.T) {
	want := []struct {
		orbit, nodes, edges, maxDeg, deg int
		what                             string
	}{
		{0, 2, 1, 1, 1, "edge"},
		{1, 3, 2, 2, 1, "end of 3-path"},
		{2, 3, 2, 2, 2, "middle of 3-path"},
		{3, 3, 3, 2, 2, "triangle"},
		{4, 4, 3, 2, 1, "end of 4-path"},
		{5, 4, 3, 2, 2, "middle of 4-path"},
		{6, 4, 3, 3, 1, "leaf of 3-star"},
		{7, 4, 3, 3, 3, "centre of 3-star"},
		{8, 4, 4, 2, 2, "4-cycle"},
		{9, 4, 4, 3, 1, "tail end of tailed triangle"},
		{10, 4, 4, 3, 2, "degree-2 node of tailed triangle"},
		{11, 4, 4, 3, 3, "degree-3 node of tailed triangle"},
		{12, 4, 5, 3, 2, "degree-2 node of diamond"},
		{13, 4, 5, 3, 3, "degree-3 node of diamond"},
		{14, 4, 6, 3, 3, "K4"},
	}
	for _, max := range []int{4, 5} {
		c, _ := New(delta.Undirected, max)
		for _, w := range want {
			o := c.Orbits[w.orbit]
			g := c.Graphlets[o.Graphlet]
			deg := make([]int, g.Nodes)
			for _, e := range g.Edges {
				deg[e[0]]++
				deg[e[1]]++
			}
			maxDeg := 0
			for _, d := range deg {
				maxDeg = maxInt(maxDeg, d)
			}
			if g.Nodes != w.nodes || len(g.Edges) != w.edges || maxDeg != w.maxDeg {
				t.Errorf("orbit %d (%s): graphlet has %d nodes, %d edges, max degree %d; want %d, %d, %d", w.orbit, w.what, g.Nodes, len(g.Edges), maxDeg, w.nodes, w.edges, w.maxDeg)
			}
			for _, p := range o.Positions {
				if deg[p] != w.deg {
					t.Errorf("orbit %d (%s): position %d has degree %d, want %d", w.orbit, w.what, p, deg[p], w.deg)
				}
			}
			if o.Name != w.what {
				t.Errorf("orbit %d named %q, want %q", w.orbit, o.Name, w.what)
			}
		}
	}
}

func maxInt(a, b int) int {
	if a > b {
		return a
	}
	return b
}

// TestPrefix checks that a smaller catalog is the prefix of a larger one
// of the same kind, so orbit ids do not depend on the counted size.
func TestPrefix(t *testing.T) {
	for _, s := range supported {
		big, _ := New(s.kind, s.max)
		for k := 2; k < s.max; k++ {
			small, _ := New(s.kind, k)
			for i, g := range small.Graphlets {
				h := big.Graphlets[i]
				if g.Code != h.Code || g.Name != h.Name || fmt.Sprint(g.Orbits) != fmt.Sprint(h.Orbits) {
					t.Fatalf("%v: graphlet %d of 2..%d differs in 2..%d", s.kind, i, k, s.max)
				}
			}
			for i, o := range small.Orbits {
				if o.Name != big.Orbits[i].Name {
					t.Fatalf("%v: orbit %d of 2..%d differs in 2..%d", s.kind, i, k, s.max)
				}
			}
		}
	}
}

func TestNamesUnique(t *testing.T) {
	for _, s := range supported {
		c, _ := New(s.kind, s.max)
		seen := map[string]bool{}
		for _, g := range c.Graphlets {
			if g.Name == "" || seen["g:"+g.Name] {
				t.Errorf("%v 2..%d: graphlet name %q empty or repeated", s.kind, s.max, g.Name)
			}
			seen["g:"+g.Name] = true
		}
		for _, o := range c.Orbits {
			if o.Name == "" || seen["o:"+o.Name] {
				t.Errorf("%v 2..%d: orbit name %q empty or repeated", s.kind, s.max, o.Name)
			}
			seen["o:"+o.Name] = true
		}
	}
	d, _ := New(delta.Directed, 3)
	for _, name := range []string{"payer of a one-way arc", "payee of a one-way arc", "both sides of a reciprocal pair", "middle of a directed 3-path", "centre of an out-star with 2 payees", "leaf of an in-star with 2 payers"} {
		found := false
		for _, o := range d.Orbits {
			found = found || o.Name == name
		}
		if !found {
			t.Errorf("directed 2..3: no orbit named %q", name)
		}
	}
}

func TestBitLayout(t *testing.T) {
	// Values follow from the documented formulas: pair (a,b), a<b, is
	// index b(b−1)/2 + a; arcs take 2p and 2p+1.
	cases := []struct {
		i, j       int
		pair, arcs uint
	}{
		{0, 1, 0, 0}, {1, 0, 0, 1}, {0, 2, 1, 2}, {2, 0, 1, 3}, {1, 2, 2, 4}, {2, 1, 2, 5},
		{0, 3, 3, 6}, {2, 3, 5, 10}, {3, 2, 5, 11}, {0, 4, 6, 12}, {3, 4, 9, 18},
	}
	for _, c := range cases {
		if PairBit(c.i, c.j) != c.pair || ArcBit(c.i, c.j) != c.arcs {
			t.Errorf("(%d,%d): PairBit %d ArcBit %d, want %d %d", c.i, c.j, PairBit(c.i, c.j), ArcBit(c.i, c.j), c.pair, c.arcs)
		}
	}
	// Code ORs the same bits: {0,1} is bit 0 and {2,3} bit 5; 1→0 is bit
	// 1 and 3→2 bit 11.
	if got := Code(delta.Undirected, [][2]int{{0, 1}, {3, 2}}); got != 1|1<<5 {
		t.Errorf("undirected Code %b", got)
	}
	if got := Code(delta.Directed, [][2]int{{1, 0}, {3, 2}}); got != 1<<1|1<<11 {
		t.Errorf("directed Code %b", got)
	}
	defer func() {
		if recover() == nil {
			t.Error("PairBit(2,2) did not panic")
		}
	}()
	PairBit(2, 2)
}

func BenchmarkLookup(b *testing.B) {
	c, _ := New(delta.Directed, 4)
	var sink int
	for i := 0; i < b.N; i++ {
		g, o := c.Lookup(4, uint32(i)&4095)
		sink += g + int(o[0])
	}
	_ = sink
}

func TestLookupRange(t *testing.T) {
	c, _ := New(delta.Undirected, 4)
	for _, bad := range []struct {
		k    int
		code uint32
	}{{1, 0}, {5, 0}, {4, 64}, {3, 8}} {
		func() {
			defer func() {
				if r := recover(); r == nil || !strings.HasPrefix(fmt.Sprint(r), "catalog: ") {
					t.Errorf("Lookup(%d, %d): panic %v, want a catalog: panic", bad.k, bad.code, r)
				}
			}()
			c.Lookup(bad.k, bad.code)
		}()
	}
}

// BenchmarkBuild measures generating the largest catalogs from scratch.
func BenchmarkBuild(b *testing.B) {
	for _, s := range []struct {
		kind delta.Kind
		max  int
	}{{delta.Undirected, 5}, {delta.Directed, 4}} {
		b.Run(fmt.Sprintf("%v-%d", s.kind, s.max), func(b *testing.B) {
			for i := 0; i < b.N; i++ {
				build(s.kind, s.max)
			}
		})
	}
}
