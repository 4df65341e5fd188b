package demo

import (
	"slices"
	"strings"
	"testing"

	"orbitwatch/delta"
	"orbitwatch/shard"
)

func TestGenerateDeterministic(t *testing.T) {
	a, b := Generate(SmallConfig()), Generate(SmallConfig())
	if !slices.Equal(a.Events, b.Events) || a.Background != b.Background || len(a.Patterns) != len(b.Patterns) {
		t.Fatal("two scenarios of the same config differ")
	}
	for i := range a.Patterns {
		if !slices.Equal(a.Patterns[i].Nodes, b.Patterns[i].Nodes) || a.Patterns[i].Complete != b.Patterns[i].Complete {
			t.Fatalf("pattern %s differs between two runs", a.Patterns[i].Name)
		}
	}
	c := SmallConfig()
	c.Seed = 2
	if slices.Equal(Generate(c).Events, a.Events) {
		t.Fatal("another seed gave the same stream")
	}
	for i := 1; i < len(a.Events); i++ {
		if a.Events[i].TS.Before(a.Events[i-1].TS) {
			t.Fatalf("event %d goes back in time", i+1)
		}
		if a.Events[i].Src == a.Events[i].Dst {
			t.Fatalf("event %d is a self-loop", i+1)
		}
	}
	for i := range a.Opening {
		if !a.Events[i].TS.Equal(c.Start) {
			t.Fatalf("opening event %d at %s, want %s", i+1, a.Events[i].TS, c.Start)
		}
	}
}

// TestPlantedPatterns applies the stream and checks, by the counting
// engine and by hand from the adjacency, that each planted pattern is in
// the final graph.
func TestPlantedPatterns(t *testing.T) {
	sc := Generate(SmallConfig())
	counting, err := shard.NewCounting(delta.Undirected, 4)
	if err != nil {
		t.Fatal(err)
	}
	ap := shard.NewApplier(counting, 0, shard.Cuts{})
	for i, e := range sc.Events {
		if err := ap.Apply(uint64(i+1), e); err != nil {
			t.Fatalf("event %d: %v", i+1, err)
		}
	}
	// Pržulj 2007 orbit numbering: 0 edge, 7 centre of 3-star, 8 4-cycle,
	// 14 K4 (catalog names checked below).
	cat := counting.Catalog
	for o, name := range map[int]string{7: "centre of 3-star", 8: "4-cycle", 14: "K4"} {
		if cat.Orbits[o].Name != name {
			t.Fatalf("orbit %d is %q, want %q", o, cat.Orbits[o].Name, name)
		}
	}
	g := ap.Graph()
	vec, err := ap.Vectors()
	if err != nil {
		t.Fatal(err)
	}
	id := func(n string) uint32 {
		x, ok := ap.Lookup(n)
		if !ok {
			t.Fatalf("planted node %s is not in the stream", n)
		}
		return x
	}
	get := func(n string, o int) uint64 { return vec.Get(id(n), o) }

	fan := sc.Pattern("fan-out")
	mule := id(fan.Nodes[0])
	if d := g.Degree(mule); d != 1+muleOut+fanOut {
		t.Fatalf("mule degree %d, want %d", d, 1+muleOut+fanOut)
	}
	// Induced 3-stars centred on the mule, counted from the adjacency:
	// triples of its neighbours with no edge among them.
	var nb []uint32
	it := g.Neighbors(mule).Iterator()
	for it.HasNext() {
		nb = append(nb, it.Next())
	}
	var stars uint64
	for i := range nb {
		for j := i + 1; j < len(nb); j++ {
			for k := j + 1; k < len(nb); k++ {
				if !g.HasEdge(nb[i], nb[j]) && !g.HasEdge(nb[i], nb[k]) && !g.HasEdge(nb[j], nb[k]) {
					stars++
				}
			}
		}
	}
	if got := get(fan.Nodes[0], 7); got != stars || got < 200 {
		t.Fatalf("mule: %d centre-of-3-star counts, %d by hand (want equal and ≥ 200)", got, stars)
	}

	// K_{2,5} on fresh accounts: through a sender C(5,2) = 10 4-cycles,
	// through a receiver 4; no triangles.
	ring := sc.Pattern("ring")
	for _, n := range ring.Nodes {
		want := uint64(4)
		if slices.Contains(ring.Expect, n) {
			want = 10
		}
		if got := get(n, 8); got != want {
			t.Fatalf("ring node %s: %d 4-cycles, want %d", n, got, want)
		}
	}
	// K5 on fresh accounts: each member in C(4,3) = 4 K4s, degree 4.
	cl := sc.Pattern("clique")
	for _, n := range cl.Nodes {
		if got, d := get(n, 14), g.Degree(id(n)); got != 4 || d != 4 {
			t.Fatalf("clique node %s: %d K4s and degree %d, want 4 and 4", n, got, d)
		}
	}
	// No K4 anywhere else: the background is K4-free by construction.
	for x, name := range ap.Names() {
		if vec.Get(uint32(x), 14) != 0 && !slices.Contains(cl.Nodes, name) {
			t.Fatalf("%s outside the clique is in %d K4s", name, vec.Get(uint32(x), 14))
		}
	}
	// The hub is the busiest shop.
	hub := id(sc.Pattern("hub").Nodes[0])
	shops := 0
	for x, name := range ap.Names() {
		if !strings.HasPrefix(name, "shop-") {
			continue
		}
		shops++
		if uint32(x) != hub && g.Degree(uint32(x)) >= g.Degree(hub) {
			t.Fatalf("%s has degree %d, the hub %d", name, g.Degree(uint32(x)), g.Degree(hub))
		}
	}
	if shops != sc.Config.Shops {
		t.Fatalf("%d shops in the stream, want %d", shops, sc.Config.Shops)
	}
	inPattern := 0
	for _, p := range sc.Patterns {
		if !p.Quiet {
			inPattern += len(p.Nodes)
		}
	}
	if want := len(ap.Names()) - inPattern; sc.Background != want {
		t.Fatalf("%d background nodes, want %d of %d nodes outside the patterns", sc.Background, want, len(ap.Names()))
	}
}
