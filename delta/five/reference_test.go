package five_test

import (
	"math/rand/v2"
	"os"
	"testing"

	"orbitwatch/bench"
	"orbitwatch/bench/gen"
	"orbitwatch/delta"
	"orbitwatch/delta/catalog"
	"orbitwatch/delta/five"
	"orbitwatch/delta/generic"
	"orbitwatch/delta/internal/pyref"
)

// TestHubGraphAgainstReferences runs the recount on a graph with hubs in
// many triangles and cycles (Barabási–Albert on 300 nodes, m = 3, plus
// 250 random edges among its 60 oldest nodes), where the attachment
// classes around a hub hold many nodes, and holds it to the ESU
// enumeration of delta/generic node by node and orbit by orbit, and to
// igraph's Graph.motifs_randesu(size=5) graphlet by graphlet (global
// counts from per-node orbits: Σ_x count(x, o) / |o| for each orbit o of
// the graphlet; the 4- and 3-node censuses too).
func TestHubGraphAgainstReferences(t *testing.T) {
	if testing.Short() {
		t.Skip("igraph's 5-node census of a 1,100-edge graph takes a few seconds")
	}
	if os.Getenv("ORBITWATCH_PYTHON") == "" {
		t.Setenv("ORBITWATCH_PYTHON", "/usr/bin/python3")
	}
	g := bench.BuildGraph(delta.Undirected, gen.BarabasiAlbert(300, 3, 7))
	r := rand.New(rand.NewPCG(7, 8))
	for added := 0; added < 250; {
		u, v := uint32(r.IntN(60)), uint32(r.IntN(60))
		if u != v && !g.HasEdge(u, v) {
			g.Increment(u, v)
			added++
		}
	}
	cat, _ := catalog.New(delta.Undirected, 5)
	got, err := five.NewRecounter(five.Options{}).Count(g)
	if err != nil {
		t.Fatal(err)
	}
	want := generic.NewRecounter(cat).Recount(g)
	if x, o, a, b, ok := got.FirstDiff(want); !ok {
		t.Fatalf("node %d orbit %d (%s): five %d, delta/generic ESU recount %d", x, o, cat.Orbits[o].Name, a, b)
	}
	var batch pyref.Batch
	gr := pyref.FromDelta(g)
	motifs := map[int]*[]pyref.Motif{}
	for size := 3; size <= 5; size++ {
		motifs[size] = batch.Motifs(gr, size)
	}
	if err := batch.Run(); err != nil {
		t.Fatal(err)
	}
	for size := 3; size <= 5; size++ {
		matched := 0
		for _, m := range *motifs[size] {
			gid, _ := cat.Lookup(size, catalog.Code(delta.Undirected, m.Edges))
			if gid < 0 {
				continue
			}
			matched++
			ours := occurrences(t, cat, got, gid)
			if !m.Counted || ours != m.Count {
				t.Errorf("graphlet %d (%s): five %d, igraph motifs_randesu(size=%d) class %d: %d", gid, cat.Graphlets[gid].Name, ours, size, m.Class, m.Count)
			}
		}
		want := map[int]int{3: 2, 4: 6, 5: 21}[size]
		if matched != want {
			t.Errorf("igraph's %d-node classes matched %d graphlets, want %d", size, matched, want)
		}
	}
	t.Logf("%d nodes, %d edges: five == ESU on every node and orbit; graphlet counts == igraph for 3-5 nodes", g.NumNodes(), g.NumEdges())
}

// occurrences is Σ_x count(x, o) / |o|, the same for every orbit o of the
// graphlet.
func occurrences(t *testing.T, cat *catalog.Catalog, v *delta.Vectors, gid int) uint64 {
	t.Helper()
	var n uint64
	for i, o := range uniqueOrbits(cat.Graphlets[gid].Orbits) {
		var s uint64
		for x := range uint32(v.NumNodes()) {
			s += v.Get(x, o)
		}
		size := uint64(len(cat.Orbits[o].Positions))
		if s%size != 0 || (i > 0 && s/size != n) {
			t.Fatalf("graphlet %d: orbit sums disagree", gid)
		}
		n = s / size
	}
	return n
}

func uniqueOrbits(orbits []int) []int {
	var out []int
	seen := map[int]bool{}
	for _, o := range orbits {
		if !seen[o] {
			seen[o] = true
			out = append(out, o)
		}
	}
	return out
}
