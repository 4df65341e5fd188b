package catalog

import (
	"reflect"
	"strings"
	"testing"

	"orbitwatch/delta"
)

// signedMatrix is a signed adjacency matrix: 0 no edge, +1, −1.
type signedMatrix [5][5]int8

func signedFromEdges(g Graphlet) signedMatrix {
	var m signedMatrix
	for i, e := range g.Edges {
		s := int8(1)
		if g.Neg[i] {
			s = -1
		}
		m[e[0]][e[1]], m[e[1]][e[0]] = s, s
	}
	return m
}

// signedFromCode decodes a signed code bit by bit from the documented
// layout (edge bit 2p, sign bit 2p+1, p = b(b−1)/2 + a); ok is false for a
// sign bit without its edge bit.
func signedFromCode(k int, code uint32) (m signedMatrix, ok bool) {
	for b := 1; b < k; b++ {
		for a := 0; a < b; a++ {
			p := uint(b*(b-1)/2 + a)
			edge, neg := code>>(2*p)&1 != 0, code>>(2*p+1)&1 != 0
			switch {
			case neg && !edge:
				return m, false
			case neg:
				m[a][b], m[b][a] = -1, -1
			case edge:
				m[a][b], m[b][a] = 1, 1
			}
		}
	}
	return m, true
}

func signedIso(k int, a, b signedMatrix, sigma []int) bool {
	for i := 0; i < k; i++ {
		for j := 0; j < k; j++ {
			if a[i][j] != b[sigma[i]][sigma[j]] {
				return false
			}
		}
	}
	return true
}

func signedConnected(k int, m signedMatrix) bool {
	var b matrix
	for i := 0; i < k; i++ {
		for j := 0; j < k; j++ {
			b[i][j] = m[i][j] != 0
		}
	}
	return weaklyConnected(k, b)
}

// TestSignedCounts holds the number of signed graphlets per node count to
// a count made without the signed enumeration: for every undirected
// graphlet H (the undirected catalog, itself held to OEIS A001349),
// Burnside's lemma over H's automorphisms counts the sign assignments of
// its edges up to sign-preserving isomorphism, Σ_σ 2^c(σ) / |Aut(H)| with
// c(σ) the number of cycles σ makes on H's edges. Worked by hand the
// same way: 2 on 2 nodes; 3 + 4 = 7 on 3; 6 + 4 + 6 + 12 + 14 + 11 = 53 on
// 4 (paths, stars, 4-cycles, tailed triangles, diamonds, K4s). The orbit
// totals, 15 and 151, are our enumeration's (DESIGN.md §6) and are held
// here for stability.
func TestSignedCounts(t *testing.T) {
	und, _ := New(delta.Undirected, 4)
	want := make([]int, 5)
	for _, h := range und.Graphlets {
		m := fromEdges(delta.Undirected, h.Edges)
		var sum, autos int
		for _, p := range allPerms(h.Nodes) {
			if !isomorphism(h.Nodes, m, m, p) {
				continue
			}
			autos++
			sum += 1 << edgeCycles(h.Edges, p)
		}
		want[h.Nodes] += sum / autos
	}
	if want[2] != 2 || want[3] != 7 || want[4] != 53 {
		t.Fatalf("Burnside counts %v, want the hand count 2, 7, 53", want[2:])
	}
	for _, s := range []struct{ max, graphlets, orbits int }{{2, 2, 2}, {3, 9, 15}, {4, 62, 151}} {
		c, err := New(delta.Signed, s.max)
		if err != nil {
			t.Fatal(err)
		}
		got := make([]int, 5)
		for _, g := range c.Graphlets {
			got[g.Nodes]++
		}
		for k := 2; k <= s.max; k++ {
			if got[k] != want[k] {
				t.Errorf("signed 2..%d: %d graphlets on %d nodes, Burnside %d", s.max, got[k], k, want[k])
			}
		}
		if len(c.Graphlets) != s.graphlets || c.NumOrbits() != s.orbits {
			t.Errorf("signed 2..%d: %d graphlets, %d orbits, want %d, %d", s.max, len(c.Graphlets), c.NumOrbits(), s.graphlets, s.orbits)
		}
	}
	if _, err := New(delta.Signed, 5); err == nil {
		t.Error("signed 5-node catalog did not fail")
	}
}

// edgeCycles returns the number of cycles the node permutation p makes on
// the edge set (edges as unordered pairs).
func edgeCycles(edges [][2]int, p []int) int {
	index := map[[2]int]int{}
	for i, e := range edges {
		index[[2]int{min(e[0], e[1]), max(e[0], e[1])}] = i
	}
	seen := make([]bool, len(edges))
	cycles := 0
	for i := range edges {
		if seen[i] {
			continue
		}
		cycles++
		for j := i; !seen[j]; {
			seen[j] = true
			e := edges[j]
			a, b := p[e[0]], p[e[1]]
			j = index[[2]int{min(a, b), max(a, b)}]
		}
	}
	return cycles
}

// TestSignedGraphletsAndOrbits checks by permutation that signed
// graphlets are connected and pairwise not sign-isomorphic, and that each
// orbit is exactly one class of sign-preserving automorphisms.
func TestSignedGraphletsAndOrbits(t *testing.T) {
	c, _ := New(delta.Signed, 4)
	for i, g := range c.Graphlets {
		if len(g.Neg) != len(g.Edges) {
			t.Fatalf("graphlet %d: %d signs for %d edges", i, len(g.Neg), len(g.Edges))
		}
		m := signedFromEdges(g)
		if cm, ok := signedFromCode(g.Nodes, g.Code); !ok || cm != m {
			t.Fatalf("graphlet %d: code %b does not match edges %v signs %v", i, g.Code, g.Edges, g.Neg)
		}
		if !signedConnected(g.Nodes, m) {
			t.Fatalf("graphlet %d (%s) is not connected", i, g.Name)
		}
		reach := map[[2]int]bool{}
		for _, p := range allPerms(g.Nodes) {
			if signedIso(g.Nodes, m, m, p) {
				for x, y := range p {
					reach[[2]int{x, y}] = true
				}
			}
		}
		for x := 0; x < g.Nodes; x++ {
			for y := 0; y < g.Nodes; y++ {
				if same := g.Orbits[x] == g.Orbits[y]; same != reach[[2]int{x, y}] {
					t.Fatalf("graphlet %d (%s): positions %d, %d same orbit %v, a sign-preserving automorphism maps one onto the other %v", i, g.Name, x, y, same, reach[[2]int{x, y}])
				}
			}
		}
		for j := 0; j < i; j++ {
			h := c.Graphlets[j]
			if h.Nodes != g.Nodes || len(h.Edges) != len(g.Edges) {
				continue
			}
			for _, p := range allPerms(g.Nodes) {
				if signedIso(g.Nodes, m, signedFromEdges(h), p) {
					t.Fatalf("graphlets %d and %d are sign-isomorphic", j, i)
				}
			}
		}
	}
}

// TestSignedLookup classifies every signed code of 2..4 nodes by
// permutation and demands Lookup's answer: −1 for a sign bit off an edge
// or a disconnected code, else the graphlet some permutation maps the code
// onto, with each position's orbit that of its image.
func TestSignedLookup(t *testing.T) {
	c, _ := New(delta.Signed, 4)
	for k := 2; k <= 4; k++ {
		perms := allPerms(k)
		for code := uint32(0); code < 1<<(k*(k-1)); code++ {
			gid, orbits := c.Lookup(k, code)
			m, ok := signedFromCode(k, code)
			if !ok || !signedConnected(k, m) {
				if gid != -1 {
					t.Fatalf("k=%d code %b: graphlet %d, want −1", k, code, gid)
				}
				continue
			}
			if gid < 0 {
				t.Fatalf("k=%d code %b: connected signed graph not classified", k, code)
			}
			g := c.Graphlets[gid]
			gm := signedFromEdges(g)
			found := false
			for _, p := range perms {
				if !signedIso(k, m, gm, p) {
					continue
				}
				found = true
				for i := 0; i < k; i++ {
					if int(orbits[i]) != g.Orbits[p[i]] {
						t.Fatalf("k=%d code %b: position %d orbit %d, its image %d is in orbit %d", k, code, i, orbits[i], p[i], g.Orbits[p[i]])
					}
				}
			}
			if !found {
				t.Fatalf("k=%d code %b: classified as graphlet %d (%s), which no permutation reaches", k, code, gid, g.Name)
			}
		}
	}
}

// TestSignedStable builds the signed catalogs afresh and demands the same
// graphlets, orbits and names as the cached ones, and that the 2..3
// catalog is a prefix of the 2..4 one.
func TestSignedStable(t *testing.T) {
	for _, k := range []int{3, 4} {
		c, _ := New(delta.Signed, k)
		again := build(delta.Signed, k)
		if !reflect.DeepEqual(c.Graphlets, again.Graphlets) || !reflect.DeepEqual(c.Orbits, again.Orbits) {
			t.Fatalf("signed 2..%d: a second build differs", k)
		}
	}
	c3, _ := New(delta.Signed, 3)
	c4, _ := New(delta.Signed, 4)
	if !reflect.DeepEqual(c3.Orbits, c4.Orbits[:len(c3.Orbits)]) || !reflect.DeepEqual(c3.Graphlets, c4.Graphlets[:len(c3.Graphlets)]) {
		t.Fatal("signed 2..3 catalog is not a prefix of 2..4")
	}
}

// TestSignedNames checks the names say what they must: unique, the sign
// count of the graphlet, balance by Cartwright & Harary (a triangle is
// balanced exactly when it has an even number of negative ties), and the
// node's own ties.
func TestSignedNames(t *testing.T) {
	c, _ := New(delta.Signed, 4)
	seen := map[string]bool{}
	for _, o := range c.Orbits {
		if seen[o.Name] || o.Short != o.Name || o.Numbering != NumberingProject {
			t.Fatalf("orbit %d: name %q repeated %v, short %q, numbering %q", o.ID, o.Name, seen[o.Name], o.Short, o.Numbering)
		}
		seen[o.Name] = true
		g := c.Graphlets[o.Graphlet]
		neg := 0
		for _, n := range g.Neg {
			if n {
				neg++
			}
		}
		if g.Nodes == 3 && len(g.Edges) == 3 {
			if want := map[bool]string{true: "(balanced)", false: "(unbalanced)"}[neg%2 == 0]; !strings.HasSuffix(g.Name, want) {
				t.Fatalf("triangle with %d negative ties named %q", neg, g.Name)
			}
		}
		p := o.Positions[0]
		own, ownNeg := 0, 0
		for i, e := range g.Edges {
			if e[0] == p || e[1] == p {
				own++
				if g.Neg[i] {
					ownNeg++
				}
			}
		}
		if own == 2 && ownNeg == 2 && !strings.HasPrefix(o.Name, "node between two negative ties") && !strings.HasPrefix(o.Name, "any node") {
			t.Fatalf("orbit %d with two negative ties named %q", o.ID, o.Name)
		}
	}
	if c.Orbits[14].Name != "any node of an all-negative triangle (unbalanced)" {
		t.Fatalf("orbit 14 is %q", c.Orbits[14].Name)
	}
}
