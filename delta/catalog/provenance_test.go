package catalog

import (
	"fmt"
	"sort"
	"testing"

	"orbitwatch/delta"
)

// TestPublishedBlocks checks the recalled layout of Pržulj 2007 (orbit
// counts per 5-node graphlet, publishedOrbitCounts) against what the
// enumeration computes: 58 orbits in all, and for every edge count the
// same multiset of orbit counts, in the recalled order.
func TestPublishedBlocks(t *testing.T) {
	c, _ := New(delta.Undirected, 5)
	total := 0
	for m, want := range publishedOrbitCounts {
		var got []int
		for _, g := range c.Graphlets {
			if g.Nodes == 5 && len(g.Edges) == m {
				got = append(got, orbitCount(g))
			}
		}
		if fmt.Sprint(got) != fmt.Sprint(want) {
			t.Errorf("5-node graphlets with %d edges have orbit counts %v in catalog order, recalled layout %v", m, got, want)
		}
		a, b := append([]int(nil), got...), append([]int(nil), want...)
		sort.Ints(a)
		sort.Ints(b)
		if fmt.Sprint(a) != fmt.Sprint(b) {
			t.Errorf("%d edges: enumeration gives orbit counts %v, recalled layout %v: the recollection is wrong", m, a, b)
		}
		for _, n := range want {
			total += n
		}
	}
	if total != 58 {
		t.Errorf("recalled layout has %d five-node orbits, want 58 (73 − 15, Pržulj 2007)", total)
	}
}

// TestPublishedFiveNodeFacts holds the published facts the issue names:
// the 5-path is graphlet 9 with orbits 15 (end), 16, 17 (middle)
// (Pržulj 2007; Hočevar & Demšar 2017, Table 1, places orbit 16 in
// graphlet 9) and K5 is orbit 72; and the ids the recalled layout fixes:
// 4-star 22 leaf, 23 centre; 5-cycle 34; K5 minus an edge 70 (degree 3),
// 71 (degree 4). Each is checked structurally (node and edge count,
// degree of the orbit's positions), not by name alone.
func TestPublishedFiveNodeFacts(t *testing.T) {
	c, _ := New(delta.Undirected, 5)
	want := []struct {
		orbit, graphlet, edges, deg int
		name                        string
	}{
		{15, 9, 4, 1, "end of 5-path"},
		{16, 9, 4, 2, "node 1 from an end of 5-path"},
		{17, 9, 4, 2, "middle of 5-path"},
		{22, 11, 4, 1, "leaf of 4-star"},
		{23, 11, 4, 4, "centre of 4-star"},
		{34, 15, 5, 2, "5-cycle"},
		{70, 28, 9, 3, ""},
		{71, 28, 9, 4, ""},
		{72, 29, 10, 4, "K5"},
	}
	for _, w := range want {
		o := c.Orbits[w.orbit]
		g := c.Graphlets[o.Graphlet]
		if o.Graphlet != w.graphlet || g.Nodes != 5 || len(g.Edges) != w.edges {
			t.Errorf("orbit %d: graphlet %d with %d nodes, %d edges; want graphlet %d, 5 nodes, %d edges", w.orbit, o.Graphlet, g.Nodes, len(g.Edges), w.graphlet, w.edges)
		}
		deg := make([]int, g.Nodes)
		for _, e := range g.Edges {
			deg[e[0]]++
			deg[e[1]]++
		}
		for _, p := range o.Positions {
			if deg[p] != w.deg {
				t.Errorf("orbit %d: position %d has degree %d, want %d", w.orbit, p, deg[p], w.deg)
			}
		}
		if w.name != "" && o.Name != w.name {
			t.Errorf("orbit %d named %q, want %q", w.orbit, o.Name, w.name)
		}
		if o.Numbering != NumberingPublished || o.Source == "" {
			t.Errorf("orbit %d: numbering %q source %q, want published with a source", w.orbit, o.Numbering, o.Source)
		}
	}
	// The middle of the 5-path is its centre: both neighbours have
	// degree 2; orbit 16's positions have an end as a neighbour.
	p5 := c.Graphlets[9]
	for _, e := range p5.Edges {
		a, b := p5.Orbits[e[0]], p5.Orbits[e[1]]
		if a == 15 && b != 16 || b == 15 && a != 16 {
			t.Errorf("5-path edge %v joins orbits %d and %d: an end must be next to orbit 16", e, a, b)
		}
	}
}

// TestProvenance: every orbit states its numbering; 2–4 node undirected
// orbits are published, directed ones are the project's, and no project
// id carries a source.
func TestProvenance(t *testing.T) {
	for _, s := range supported {
		c, _ := New(s.kind, s.max)
		published := 0
		for _, o := range c.Orbits {
			switch o.Numbering {
			case NumberingPublished:
				published++
				if o.Source == "" {
					t.Errorf("%v orbit %d is published without a source", s.kind, o.ID)
				}
			case NumberingProject:
				if o.Source != "" {
					t.Errorf("%v orbit %d is the project's but names source %q", s.kind, o.ID, o.Source)
				}
			default:
				t.Errorf("%v orbit %d: numbering %q", s.kind, o.ID, o.Numbering)
			}
			if s.kind == delta.Directed && o.Numbering != NumberingProject {
				t.Errorf("directed orbit %d claims a published number", o.ID)
			}
			if s.kind == delta.Undirected && o.ID < 15 && o.Numbering != NumberingPublished {
				t.Errorf("undirected orbit %d is not marked published", o.ID)
			}
		}
		t.Logf("%v 2..%d: %d of %d orbits published", s.kind, s.max, published, c.NumOrbits())
	}
}

// TestOverlap checks the orbit-equation matrix: upper triangular with a
// unit diagonal, and by hand for a few entries that follow from the
// definitions: a triangle holds 3 spanning 3-paths, its node is the
// middle of one and an end of two (A[2][3] = 1, A[1][3] = 2); K4 holds 16
// spanning trees (Cayley: 4^2), 12 of them 4-paths and 4 of them 3-stars;
// its node is the centre of one star (A[7][14] = 1) and a leaf of three
// (A[6][14] = 3); K5 holds 60 Hamiltonian paths (5!/2), each node the
// middle of 12 (A[17][72] = 12).
func TestOverlap(t *testing.T) {
	c, _ := New(delta.Undirected, 5)
	a := c.Overlap()
	for p := range a {
		for o := range a[p] {
			if (p == o && a[p][o] != 1) || (p > o && a[p][o] != 0) {
				t.Fatalf("A[%d][%d] = %d breaks the triangular order", p, o, a[p][o])
			}
		}
	}
	for _, w := range []struct {
		p, o int
		want int64
	}{{2, 3, 1}, {1, 3, 2}, {7, 14, 1}, {6, 14, 3}, {5, 14, 6}, {4, 14, 6}, {17, 72, 12}, {15, 72, 24}, {23, 72, 1}} {
		if a[w.p][w.o] != w.want {
			t.Errorf("A[%d][%d] = %d, want %d", w.p, w.o, a[w.p][w.o], w.want)
		}
	}
}
