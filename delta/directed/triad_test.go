package directed

import (
	"math/rand/v2"
	"testing"

	"orbitwatch/delta"
)

// Mega-merchant test sizes: 110k households joined by BA(110k, m=2) arcs
// with random directions, 100k of them paying one merchant.
const (
	megaHouseholds = 110_000
	megaPayers     = 100_000
)

// TestTriadsMegaMerchant replays 100k buyers paying one merchant over a
// sparse background, then removes 20k of those payments and about 4k
// other arcs
// and re-adds half of each, and at every checkpoint holds every node's
// vector to the static recount (NewRecounter(3), a separate code path;
// brute force is too slow at this size), the merchant's vector derived
// from records to its in-memory one, a Restore from the records to the
// same vectors, and the merchant's in-star count to a closed form counted
// on the graph directly.
func TestTriadsMegaMerchant(t *testing.T) {
	if testing.Short() {
		t.Skip("mega-merchant replay skipped in short mode")
	}
	arcs, hub := withMerchant(baArcs(megaHouseholds, 2, 7, 0.05), megaHouseholds, megaPayers, 8)
	g := delta.NewGraph(delta.Directed)
	c := NewTriads()
	if err := insertAll(c, g, arcs); err != nil {
		t.Fatal(err)
	}
	if got := g.In(hub).GetCardinality(); got != megaPayers {
		t.Fatalf("merchant has %d payers, want %d", got, megaPayers)
	}
	megaCheckpoint(t, "after the build", g, c, hub)
	rng := rand.New(rand.NewPCG(9, 9))
	var removed [][2]uint32
	toHub := 0
	for _, i := range rng.Perm(len(arcs)) {
		a := arcs[i]
		if a[1] == hub && toHub < 20_000 {
			toHub++
		} else if a[1] == hub || rng.IntN(60) != 0 {
			continue
		}
		if err := c.Delete(g, a[0], a[1]); err != nil {
			t.Fatal(err)
		}
		g.Unlink(a[0], a[1])
		removed = append(removed, a)
	}
	megaCheckpoint(t, "after the removes", g, c, hub)
	for _, a := range removed[:len(removed)/2] {
		if err := c.Insert(g, a[0], a[1], false); err != nil {
			t.Fatal(err)
		}
		g.Link(a[0], a[1])
	}
	megaCheckpoint(t, "after re-adding half", g, c, hub)
	fresh := NewTriads()
	if err := fresh.Restore(g, delta.NewMemSource(g, c)); err != nil {
		t.Fatal(err)
	}
	megaCheckpoint(t, "restored from records", g, fresh, hub)
}

func megaCheckpoint(t *testing.T, when string, g *delta.Graph, c *Triads, hub uint32) {
	t.Helper()
	want := NewRecounter(3).Recount(g)
	var buf []uint64
	var err error
	for x := range uint32(g.NumNodes()) {
		if buf, err = c.Vector(x, buf); err != nil {
			t.Fatalf("%s: node %d: %v", when, x, err)
		}
		for o, v := range buf {
			if w := want.Get(x, o); v != w {
				t.Fatalf("%s: node %d orbit %d: counter %d, recount %d", when, x, o, v, w)
			}
		}
	}
	derived, err := c.Derive(delta.NewMemSource(g, c), hub, nil)
	if err != nil {
		t.Fatal(err)
	}
	for o, v := range derived {
		if w := want.Get(hub, o); v != w {
			t.Fatalf("%s: merchant orbit %d: derived %d, recount %d", when, o, v, w)
		}
	}
	// Closed form, counted on the graph: the merchant is the centre of an
	// induced in-star with two payers once per pair of its payers (who it
	// does not pay) that are not joined. Orbit 8 is "centre of an in-star
	// with 2 payers" in the catalog (checked by name below).
	if name := c.eq.cat.Orbits[8].Name; name != "centre of an in-star with 2 payers" {
		t.Fatalf("orbit 8 is %q", name)
	}
	payers := map[uint32]bool{}
	in := g.In(hub).Iterator()
	for in.HasNext() {
		if y := in.Next(); !g.HasEdge(hub, y) {
			payers[y] = true
		}
	}
	p := uint64(len(payers))
	joined := uint64(0)
	g.ForEachEdge(func(a, b uint32, _ uint32) {
		if payers[a] && payers[b] && (!g.HasEdge(b, a) || a < b) {
			joined++
		}
	})
	if star := p*(p-1)/2 - joined; derived[8] != star {
		t.Fatalf("%s: merchant in-star centre %d, closed form C(%d,2) − %d = %d", when, derived[8], p, joined, star)
	}
	t.Logf("%s: %d nodes, %d arcs, merchant paid by %d, in-star centre %d, triangles at the merchant %d", when, g.NumNodes(), g.NumEdges(), p, derived[8], sumTriangles(c, hub))
}

func sumTriangles(c *Triads, x uint32) int64 {
	var s int64
	for _, v := range c.recs[x].tri {
		s += v
	}
	return s
}

// TestTriadsAllocateNothing: once warm, an event allocates nothing (graph
// updates included on this graph, where no node loses its last arc).
func TestTriadsAllocateNothing(t *testing.T) {
	arcs := baArcs(20_000, 5, 1, 0.05)
	g := delta.NewGraph(delta.Directed)
	c := NewTriads()
	if err := insertAll(c, g, arcs); err != nil {
		t.Fatal(err)
	}
	if allocs := churnAllocs(t, c, g, arcs, 4000); allocs != 0 {
		t.Fatalf("%.2f allocations per delete and insert", allocs)
	}
}

// countingSource counts what Derive reads.
type countingSource struct {
	delta.Source
	records  int
	adjacent map[uint32]int
	linked   int
}

func (s *countingSource) Record(x uint32) ([]byte, error) {
	s.records++
	return s.Source.Record(x)
}

func (s *countingSource) Adjacent(x uint32, dst []delta.Adj) ([]delta.Adj, error) {
	s.adjacent[x]++
	return s.Source.Adjacent(x, dst)
}

func (s *countingSource) Linked(x, y uint32) (delta.Link, error) {
	s.linked++
	return s.Source.Linked(x, y)
}

// TestTriadsDeriveNextToHub: deriving a payer of a merchant with 20k
// payers reads the payer's adjacency and d(x)+1 records, never the
// merchant's adjacency.
func TestTriadsDeriveNextToHub(t *testing.T) {
	arcs, hub := withMerchant(baArcs(20_000, 2, 3, 0.05), 20_000, 20_000, 4)
	g := delta.NewGraph(delta.Directed)
	c := NewTriads()
	if err := insertAll(c, g, arcs); err != nil {
		t.Fatal(err)
	}
	payer := uint32(17)
	src := &countingSource{Source: delta.NewMemSource(g, c), adjacent: map[uint32]int{}}
	got, err := c.Derive(src, payer, nil)
	if err != nil {
		t.Fatal(err)
	}
	want, err := c.Vector(payer, nil)
	if err != nil {
		t.Fatal(err)
	}
	for o := range want {
		if got[o] != want[o] {
			t.Fatalf("orbit %d: derived %d, vector %d", o, got[o], want[o])
		}
	}
	d := g.Degree(payer)
	if src.adjacent[hub] != 0 || len(src.adjacent) != 1 || src.records != d+1 {
		t.Fatalf("Derive of a payer with %d neighbours read adjacency of %v and %d records", d, src.adjacent, src.records)
	}
}

// TestWrongCountersAreCaught shows the comparison the hub tests rely on
// can fail: a Triads whose triangle table swaps two orbits, and a Quads
// whose heavy node's light degree sums are off by one, disagree with the
// recount somewhere on a small payments graph.
func TestWrongCountersAreCaught(t *testing.T) {
	arcs, hub := withMerchant(baArcs(300, 2, 11, 0.1), 300, 200, 12)
	differs := func(c delta.Counter, g *delta.Graph) bool {
		want := NewRecounter(c.MaxNodes()).Recount(g)
		for x := range uint32(g.NumNodes()) {
			got, err := c.Vector(x, nil)
			if err != nil {
				return true
			}
			for o, v := range got {
				if v != want.Get(x, o) {
					return true
				}
			}
		}
		return false
	}
	tri := NewTriads()
	tri.triIndex[0][0][0], tri.triIndex[0][0][1] = tri.triIndex[0][0][1], tri.triIndex[0][0][0]
	g := delta.NewGraph(delta.Directed)
	if err := insertAll(tri, g, arcs); err != nil {
		t.Fatal(err)
	}
	if !differs(tri, g) {
		t.Error("a Triads with two triangle orbits swapped agrees with the recount")
	}
	q := NewQuads(32)
	g = delta.NewGraph(delta.Directed)
	if err := insertAll(q, g, arcs); err != nil {
		t.Fatal(err)
	}
	if differs(q, g) {
		t.Fatal("the unbroken Quads disagrees with the recount")
	}
	q.heavy[hub].wl[tIn-1][0]++
	if !differs(q, g) {
		t.Error("a Quads with a wrong heavy degree sum agrees with the recount")
	}
}
