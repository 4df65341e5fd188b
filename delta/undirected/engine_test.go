package undirected

import (
	"math/rand/v2"
	"testing"

	"orbitwatch/delta"
	"orbitwatch/delta/brute"
	"orbitwatch/delta/catalog"
)

// TestEngineEveryEvent replays seeded random streams of inserts and deletes
// on small graphs and demands, for every single event, that the emitted
// changes equal the difference of two brute-force enumerations, and at
// every checkpoint that the running sums equal the enumeration and the
// recount.
func TestEngineEveryEvent(t *testing.T) {
	for _, k := range []int{2, 3, 4} {
		for seed := range uint64(6) {
			rng := rand.New(rand.NewPCG(seed, uint64(k)))
			n := 7 + int(seed)*2
			e := NewEngine(k)
			g := randomGraph(rng, n, 0.15*float64(seed%4))
			sums := enumerate(g, k)
			before := sums.Clone()
			events := 400
			if testing.Short() {
				events = 100
			}
			for step := range events {
				u, v := randomPair(rng, n)
				d := toggle(t, e, g, u, v)
				after := enumerate(g, k)
				checkStep(t, step, before, after, d)
				applyTo(t, sums, d)
				before = after
				if step%50 == 49 {
					mustEqual(t, "running sums vs enumerate", sums, after)
					mustEqual(t, "running sums vs recount", sums, NewRecounter(k).Recount(g))
				}
			}
		}
	}
}

// TestEngineHub builds a star of 300 leaves around node 0 plus random edges
// among the leaves and a few outside nodes, then inserts and deletes edges
// at the hub and between its leaves; each event's changes must equal the
// difference of two recounts (the recount is held against the enumeration
// in TestRecountRandom).
func TestEngineHub(t *testing.T) {
	const leaves, outside = 300, 40
	n := 1 + leaves + outside
	rng := rand.New(rand.NewPCG(7, 7))
	g := delta.NewGraph(delta.Undirected)
	g.Grow(n)
	for x := uint32(1); x <= leaves; x++ {
		g.Link(0, x)
	}
	for range 900 {
		u, v := randomPair(rng, n-1)
		if u, v = u+1, v+1; !g.HasEdge(u, v) {
			g.Link(u, v)
		}
	}
	for _, k := range []int{3, 4} {
		hubStream(t, g, k, rng)
	}
}

// hubStream toggles edges at the hub (two events in three) and between
// other nodes, checking each event against two recounts and the final
// running sums against delta/brute.
func hubStream(t *testing.T, g *delta.Graph, k int, rng *rand.Rand) {
	n := g.NumNodes()
	e := NewEngine(k)
	r := NewRecounter(k)
	before := r.Recount(g)
	sums := before.Clone()
	events := 120
	if testing.Short() {
		events = 40
	}
	for step := range events {
		var u, v uint32
		if step%3 == 2 {
			u, v = randomPair(rng, n-1)
			u, v = u+1, v+1
		} else {
			u, v = 0, uint32(1+rng.IntN(n-1))
		}
		d := toggle(t, e, g, u, v)
		after := r.Recount(g)
		checkStep(t, step, before, after, d)
		applyTo(t, sums, d)
		before = after
	}
	mustEqual(t, "hub running sums vs recount", sums, before)
	cat, err := catalog.New(delta.Undirected, k)
	if err != nil {
		t.Fatal(err)
	}
	mustEqual(t, "hub running sums vs brute", sums, brute.Count(g, cat))
}

// TestEngineBarabasiAlbert runs a longer delete/re-insert stream on a
// skewed graph and compares the running sums with a recount at
// checkpoints.
func TestEngineBarabasiAlbert(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 5))
	n := 3000
	g := barabasiAlbert(rng, n, 4)
	e := NewEngine(4)
	r := NewRecounter(4)
	vec := r.Recount(g)
	emit := func(x uint32, o int, k int64) {
		if err := vec.Add(x, o, k); err != nil {
			t.Fatal(err)
		}
	}
	events := 6000
	if testing.Short() {
		events = 1500
	}
	for step := range events {
		u, v := randomPair(rng, n)
		if step%2 == 0 {
			u, v = existingEdge(rng, g)
		}
		if g.HasEdge(u, v) {
			e.Delete(g, u, v, emit)
			g.Unlink(u, v)
		} else {
			e.Insert(g, u, v, emit)
			g.Link(u, v)
		}
		if step%1000 == 999 {
			mustEqual(t, "running sums vs recount", vec, r.Recount(g))
		}
	}
}

// existingEdge returns a uniform random node's random neighbour, or a
// random pair if that node is isolated.
func existingEdge(rng *rand.Rand, g *delta.Graph) (uint32, uint32) {
	u := uint32(rng.IntN(g.NumNodes()))
	b := g.Out(u)
	if b.IsEmpty() {
		return randomPair(rng, g.NumNodes())
	}
	v, _ := b.Select(uint32(rng.IntN(int(b.GetCardinality()))))
	return u, v
}

// TestEngineContract checks the engine's reported shape and its panics on
// programmer errors.
func TestEngineContract(t *testing.T) {
	for k, want := range map[int]int{2: 1, 3: 4, 4: 15} {
		e := NewEngine(k)
		if e.Kind() != delta.Undirected || e.MaxNodes() != k || e.NumOrbits() != want {
			t.Fatalf("maxNodes %d: kind %v maxNodes %d orbits %d", k, e.Kind(), e.MaxNodes(), e.NumOrbits())
		}
	}
	g := graphOf(3, [][2]uint32{{0, 1}})
	e := NewEngine(4)
	nop := func(uint32, int, int64) {}
	for name, f := range map[string]func(){
		"insert present": func() { e.Insert(g, 0, 1, nop) },
		"delete absent":  func() { e.Delete(g, 1, 2, nop) },
		"self-loop":      func() { e.Insert(g, 2, 2, nop) },
		"unknown node":   func() { e.Insert(g, 0, 9, nop) },
		"maxNodes 5":     func() { NewEngine(5) },
		"directed graph": func() { NewRecounter(4).Recount(delta.NewGraph(delta.Directed)) },
	} {
		func() {
			defer func() {
				if recover() == nil {
					t.Errorf("%s: no panic", name)
				}
			}()
			f()
		}()
	}
}

// TestEngineNoAllocs checks that a warmed engine allocates nothing per
// event, for inserts and deletes at a hub and away from it.
func TestEngineNoAllocs(t *testing.T) {
	rng := rand.New(rand.NewPCG(13, 1))
	g := barabasiAlbert(rng, 2000, 3)
	e := NewEngine(4)
	var sum int64
	emit := func(_ uint32, _ int, d int64) { sum += d }
	edges := [][2]uint32{{0, 1}, {1, 0}, {1500, 1999}, {3, 1700}}
	for _, uv := range edges {
		if !g.HasEdge(uv[0], uv[1]) {
			g.Link(uv[0], uv[1])
		}
		e.Delete(g, uv[0], uv[1], emit)
	}
	for _, uv := range edges {
		if n := testing.AllocsPerRun(20, func() { e.Delete(g, uv[0], uv[1], emit) }); n != 0 {
			t.Errorf("Delete %v: %v allocations per event", uv, n)
		}
		g.Unlink(uv[0], uv[1])
		if n := testing.AllocsPerRun(20, func() { e.Insert(g, uv[0], uv[1], emit) }); n != 0 {
			t.Errorf("Insert %v: %v allocations per event", uv, n)
		}
		g.Link(uv[0], uv[1])
	}
	if sum == 0 {
		t.Fatal("no changes emitted")
	}
}
