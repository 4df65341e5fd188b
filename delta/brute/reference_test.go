package brute

import (
	"math/rand/v2"
	"testing"

	"orbitwatch/delta"
	"orbitwatch/delta/catalog"
	"orbitwatch/delta/internal/pyref"
)

// graphletOf classifies an outside reference's representative edge list.
func graphletOf(c *catalog.Catalog, size int, edges [][2]int) int {
	gid, _ := c.Lookup(size, catalog.Code(c.Kind, edges))
	return gid
}

// TestAgainstIgraph holds GraphletCounts against igraph's motif census
// (Graph.motifs_randesu, python-igraph 0.10) on networkx's karate club
// graph (Zachary 1977) for 3–5 nodes and on a seeded random digraph for
// 3–4 nodes. Classes are matched to graphlets by classifying igraph's
// representative (Graph.Isoclass); every connected class must match a
// distinct graphlet and have the same count.
func TestAgainstIgraph(t *testing.T) {
	kg, err := pyref.KarateClub()
	if err != nil {
		t.Fatal(err)
	}
	karate := delta.NewGraph(delta.Undirected)
	karate.Grow(kg.Nodes)
	for _, e := range kg.Edges {
		karate.Link(e[0], e[1])
	}
	r := rand.New(rand.NewPCG(17, 19))
	digraph := randomGraph(r, delta.Directed, 30, 110)

	var b pyref.Batch
	type job struct {
		g    *delta.Graph
		c    *catalog.Catalog
		size int
		ms   *[]pyref.Motif
	}
	var jobs []job
	for size := 3; size <= 5; size++ {
		jobs = append(jobs, job{karate, mustCatalog(t, delta.Undirected, 5), size, b.Motifs(pyref.FromDelta(karate), size)})
	}
	for size := 3; size <= 4; size++ {
		jobs = append(jobs, job{digraph, mustCatalog(t, delta.Directed, 4), size, b.Motifs(pyref.FromDelta(digraph), size)})
	}
	census := b.TriadicCensus(pyref.FromDelta(digraph))
	if err := b.Run(); err != nil {
		t.Fatal(err)
	}
	for _, j := range jobs {
		counts := GraphletCounts(j.g, j.c)
		seen := map[int]bool{}
		for _, m := range *j.ms {
			gid := graphletOf(j.c, j.size, m.Edges)
			if gid < 0 {
				continue
			}
			if seen[gid] || !m.Counted {
				t.Fatalf("%v size %d: igraph class %d (graphlet %d) repeated or uncounted", j.c.Kind, j.size, m.Class, gid)
			}
			seen[gid] = true
			if counts[gid] != m.Count {
				t.Errorf("%v size %d graphlet %d (%s): brute %d, igraph class %d %d", j.c.Kind, j.size, gid, j.c.Graphlets[gid].Name, counts[gid], m.Class, m.Count)
			}
		}
		want := 0
		for _, g := range j.c.Graphlets {
			if g.Nodes == j.size {
				want++
			}
		}
		if len(seen) != want {
			t.Errorf("%v size %d: igraph classes matched %d graphlets, want %d", j.c.Kind, j.size, len(seen), want)
		}
	}
	// networkx.triadic_census on the same digraph: each MAN type matched
	// through networkx.triad_graph's representative.
	d := mustCatalog(t, delta.Directed, 4)
	counts := GraphletCounts(digraph, d)
	matched := 0
	for name, arcs := range census.Triads {
		if gid := graphletOf(d, 3, arcs); gid >= 0 {
			matched++
			if counts[gid] != census.Counts[name] {
				t.Errorf("triad %s = graphlet %d (%s): brute %d, networkx %d", name, gid, d.Graphlets[gid].Name, counts[gid], census.Counts[name])
			}
		}
	}
	if matched != 13 {
		t.Errorf("%d triad types matched connected graphlets, want 13", matched)
	}
}
