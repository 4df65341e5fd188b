package directed

import (
	"fmt"
	"math/rand/v2"
	"testing"

	"orbitwatch/delta"
)

// hubScenario returns arcs of two merchants over a sparse background of
// households: 4k and 2.5k payers drawn from 6k households (so they share
// about 1.7k customers, a large codegree between two heavy nodes), the
// merchants paying each other, one refunding some of its payers (reciprocal
// pairs), and the background BA(6k, m=2) with random directions.
func hubScenario(seed uint64) (arcs [][2]uint32, m1, m2 uint32) {
	const households = 6000
	rng := rand.New(rand.NewPCG(seed, 0x4b))
	arcs, m1 = withMerchant(baArcs(households, 2, seed, 0.05), households, 4000, seed+1)
	m2 = m1 + 1
	for _, x := range rng.Perm(households)[:2500] {
		arcs = append(arcs, [2]uint32{uint32(x), m2})
		if rng.IntN(20) == 0 {
			arcs = append(arcs, [2]uint32{m2, uint32(x)})
		}
	}
	arcs = append(arcs, [2]uint32{m1, m2}, [2]uint32{m2, m1})
	return arcs, m1, m2
}

// TestQuadsHubs replays the two-merchant scenario through Quads, removes
// and re-adds a third of the payments and the merchants' arcs to each
// other, and at every checkpoint holds every node's vector to the static
// recount (NewRecounter(4)), the vectors derived from records to the
// in-memory ones for the merchants and a sample of payers, and a counter
// restored from the records to the same vectors.
func TestQuadsHubs(t *testing.T) {
	if testing.Short() {
		t.Skip("hub replay skipped in short mode")
	}
	arcs, m1, m2 := hubScenario(3)
	g := delta.NewGraph(delta.Directed)
	q := NewQuads(0)
	if err := insertAll(q, g, arcs); err != nil {
		t.Fatal(err)
	}
	if q.heavy[m1] == nil || q.heavy[m2] == nil || q.heavy[m1].pair[m2] == nil {
		t.Fatalf("the merchants are not heavy with a codegree row: %v %v", q.heavy[m1], q.heavy[m2])
	}
	quadsCheckpoint(t, "after the build", g, q, m1, m2)
	rng := rand.New(rand.NewPCG(4, 4))
	var removed [][2]uint32
	for _, a := range arcs {
		hubArc := a[0] == m1 || a[0] == m2 || a[1] == m1 || a[1] == m2
		if hubArc && rng.IntN(3) == 0 || (a[0] == m1 && a[1] == m2) {
			if err := q.Delete(g, a[0], a[1]); err != nil {
				t.Fatal(err)
			}
			g.Unlink(a[0], a[1])
			removed = append(removed, a)
		}
	}
	quadsCheckpoint(t, "after the removes", g, q, m1, m2)
	for _, a := range removed[len(removed)/2:] {
		if err := q.Insert(g, a[0], a[1], false); err != nil {
			t.Fatal(err)
		}
		g.Link(a[0], a[1])
	}
	quadsCheckpoint(t, "after re-adding half", g, q, m1, m2)
	fresh := NewQuads(0)
	if err := fresh.Restore(g, delta.NewMemSource(g, q)); err != nil {
		t.Fatal(err)
	}
	quadsCheckpoint(t, "restored from records", g, fresh, m1, m2)
}

func quadsCheckpoint(t *testing.T, when string, g *delta.Graph, q *Quads, m1, m2 uint32) {
	t.Helper()
	want := NewRecounter(4).Recount(g)
	src := delta.NewMemSource(g, q)
	var buf, derived []uint64
	var err error
	for x := range uint32(g.NumNodes()) {
		if buf, err = q.Vector(x, buf); err != nil {
			t.Fatalf("%s: node %d: %v", when, x, err)
		}
		for o, v := range buf {
			if w := want.Get(x, o); v != w {
				t.Fatalf("%s: node %d orbit %d (%s): counter %d, recount %d", when, x, o, q.eq.cat.Orbits[o].Name, v, w)
			}
		}
		if x == m1 || x == m2 || x%97 == 0 {
			if derived, err = q.Derive(src, x, derived); err != nil {
				t.Fatal(err)
			}
			for o, v := range derived {
				if v != buf[o] {
					t.Fatalf("%s: node %d orbit %d: derived %d, vector %d", when, x, o, v, buf[o])
				}
			}
		}
	}
	t.Logf("%s: %d arcs, %d heavy nodes, codegree rows of merchant 1: %d", when, g.NumEdges(), len(q.heavy), len(q.heavy[m1].pair))
}

// TestQuadsDeriveNextToHub: deriving a household paying both merchants reads the
// adjacency of the payer and of its light neighbours, never a merchant's.
func TestQuadsDeriveNextToHub(t *testing.T) {
	arcs, m1, m2 := hubScenario(5)
	g := delta.NewGraph(delta.Directed)
	q := NewQuads(0)
	if err := insertAll(q, g, arcs); err != nil {
		t.Fatal(err)
	}
	var payer uint32
	for x := range uint32(m1) {
		if g.HasEdge(x, m1) && g.HasEdge(x, m2) && g.Degree(x) <= 8 {
			payer = x
			break
		}
	}
	src := &countingSource{Source: delta.NewMemSource(g, q), adjacent: map[uint32]int{}}
	got, err := q.Derive(src, payer, nil)
	if err != nil {
		t.Fatal(err)
	}
	want, err := q.Vector(payer, nil)
	if err != nil {
		t.Fatal(err)
	}
	for o := range want {
		if got[o] != want[o] {
			t.Fatalf("orbit %d: derived %d, vector %d", o, got[o], want[o])
		}
	}
	if src.adjacent[m1]+src.adjacent[m2] != 0 {
		t.Fatalf("Derive of payer %d read a merchant's adjacency: %v", payer, src.adjacent)
	}
	t.Logf("payer %d of degree %d: %d adjacency reads, %d record reads, %d link tests", payer, g.Degree(payer), len(src.adjacent), src.records, src.linked)
}

// TestQuadsAllocateNothing: once warm, an event between light nodes and
// one to a heavy merchant allocate nothing.
func TestQuadsAllocateNothing(t *testing.T) {
	arcs, m1, _ := hubScenario(7)
	g := delta.NewGraph(delta.Directed)
	q := NewQuads(0)
	if err := insertAll(q, g, arcs); err != nil {
		t.Fatal(err)
	}
	var light, toHub [][2]uint32
	for _, a := range arcs {
		switch {
		case a[1] == m1 && len(toHub) < 500:
			toHub = append(toHub, a)
		case a[0] < m1 && a[1] < m1 && q.heavy[a[0]] == nil && q.heavy[a[1]] == nil && len(light) < 500:
			light = append(light, a)
		}
	}
	for _, sample := range [][][2]uint32{light, toHub} {
		allocs := churnAllocs(t, q, g, sample, 1000)
		if allocs != 0 {
			t.Errorf("%.2f allocations per delete and insert (graph updates included)", allocs)
		}
	}
}

// TestQuadsConcurrentReads: reads may run concurrently with each other
// (delta.Counter); four goroutines reading every node agree with one.
func TestQuadsConcurrentReads(t *testing.T) {
	arcs, _, _ := hubScenario(9)
	g := delta.NewGraph(delta.Directed)
	q := NewQuads(16)
	if err := insertAll(q, g, arcs[:6000]); err != nil {
		t.Fatal(err)
	}
	n := uint32(g.NumNodes())
	want := make([][]uint64, n)
	for x := range n {
		v, err := q.Vector(x, nil)
		if err != nil {
			t.Fatal(err)
		}
		want[x] = v
	}
	errs := make(chan error, 4)
	for w := range uint32(4) {
		go func() {
			var buf []uint64
			var err error
			for x := w; x < n; x += 4 {
				if buf, err = q.Vector(x, buf); err != nil {
					errs <- err
					return
				}
				for o := range buf {
					if buf[o] != want[x][o] {
						errs <- fmt.Errorf("node %d orbit %d: %d concurrently, %d alone", x, o, buf[o], want[x][o])
						return
					}
				}
			}
			errs <- nil
		}()
	}
	for range 4 {
		if err := <-errs; err != nil {
			t.Fatal(err)
		}
	}
}
