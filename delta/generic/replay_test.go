package generic

import (
	"fmt"
	"math/rand/v2"
	"testing"

	"orbitwatch/delta"
	"orbitwatch/delta/catalog"
)

// mustCatalog returns the catalog of kind on 2..k nodes or fails the test.
func mustCatalog(t testing.TB, kind delta.Kind, k int) *catalog.Catalog {
	t.Helper()
	c, err := catalog.New(kind, k)
	if err != nil {
		t.Fatal(err)
	}
	return c
}

// state is a graph with the vectors an engine keeps current on it.
type state struct {
	t   testing.TB
	eng delta.Engine
	g   *delta.Graph
	vec *delta.Vectors
	add delta.Emit
}

func newState(t testing.TB, eng delta.Engine) *state {
	s := &state{t: t, eng: eng, g: delta.NewGraph(eng.Kind()), vec: delta.NewVectors(0, eng.NumOrbits())}
	s.add = func(x uint32, o int, d int64) {
		if err := s.vec.Add(x, o, d); err != nil {
			t.Fatal(err)
		}
	}
	return s
}

// apply adds (add) or removes one multiplicity of uv and runs the engine
// when the simple graph changes. It reports whether the event was accepted.
func (s *state) apply(add bool, u, v uint32) bool {
	if u == v {
		return false
	}
	s.g.Grow(int(max(u, v)) + 1)
	s.vec.Grow(s.g.NumNodes())
	m := s.g.Multiplicity(u, v)
	if add {
		if m == 0 {
			s.eng.Insert(s.g, u, v, s.add)
		}
		_, err := s.g.Increment(u, v)
		return err == nil
	}
	if m == 0 {
		return false
	}
	if m == 1 {
		s.eng.Delete(s.g, u, v, s.add)
	}
	_, err := s.g.Decrement(u, v)
	return err == nil
}

// randomStream applies n random events on nodes 0..nodes−1 to every state,
// with adds three times as likely as removes; directed streams add the
// reverse arc of a present arc one time in four, so reciprocal pairs and
// one-sided removes are frequent. check runs every checkEvery events.
func randomStream(rng *rand.Rand, nodes, n, checkEvery int, states []*state, check func(step int)) {
	kind := states[0].g.Kind()
	for i := 1; i <= n; i++ {
		u, v := uint32(rng.IntN(nodes)), uint32(rng.IntN(nodes))
		add := rng.IntN(4) != 0
		if kind == delta.Directed && rng.IntN(4) == 0 && states[0].g.HasEdge(v, u) {
			add = true
		}
		if !add && !states[0].g.Adjacent(u, v) && states[0].g.NumEdges() > 0 {
			// Pick a present edge to remove instead of a miss most of the time.
			states[0].g.ForEachEdge(func(a, b uint32, _ uint32) {
				if rng.IntN(states[0].g.NumEdges()) == 0 {
					u, v = a, b
				}
			})
		} else if !add && states[0].g.HasEdge(v, u) && !states[0].g.HasEdge(u, v) {
			u, v = v, u
		}
		for _, s := range states {
			s.apply(add, u, v)
		}
		if i%checkEvery == 0 {
			check(i)
		}
	}
}

// sameVectors fails the test where two matrices differ.
func sameVectors(t testing.TB, what string, got, want *delta.Vectors) {
	t.Helper()
	if x, o, a, b, ok := got.FirstDiff(want); !ok {
		t.Fatalf("%s: node %d orbit %d: %d, want %d", what, x, o, a, b)
	}
}

// TestReplayAgainstRecount replays random streams through the enumerator
// and the default engine and holds both against a fresh recount at every
// checkpoint, for every supported kind and size.
func TestReplayAgainstRecount(t *testing.T) {
	cases := []struct {
		kind         delta.Kind
		k            int
		nodes, steps int
	}{
		{delta.Undirected, 2, 8, 200},
		{delta.Undirected, 3, 14, 600},
		{delta.Undirected, 4, 14, 600},
		{delta.Undirected, 5, 12, 400},
		{delta.Directed, 2, 8, 200},
		{delta.Directed, 3, 14, 600},
		{delta.Directed, 4, 12, 600},
		{delta.Undirected, 4, 60, 500},
		{delta.Directed, 4, 60, 500},
		{delta.Undirected, 5, 40, 300},
	}
	for _, c := range cases {
		t.Run(fmt.Sprintf("%v-k%d-n%d", c.kind, c.k, c.nodes), func(t *testing.T) {
			cat := mustCatalog(t, c.kind, c.k)
			rec := NewRecounter(cat)
			ref := newState(t, NewEnumerator(cat))
			fast := newState(t, NewEngine(cat))
			rng := rand.New(rand.NewPCG(uint64(c.k), uint64(c.nodes)<<8|uint64(c.kind)))
			checks := 0
			randomStream(rng, c.nodes, c.steps, 25, []*state{ref, fast}, func(step int) {
				want := rec.Recount(ref.g)
				sameVectors(t, fmt.Sprintf("enumerator after %d events", step), ref.vec, want)
				sameVectors(t, fmt.Sprintf("engine after %d events", step), fast.vec, want)
				checks++
			})
			if checks == 0 || ref.g.NumEdges() == 0 {
				t.Fatalf("stream checked %d times, ended with %d edges", checks, ref.g.NumEdges())
			}
		})
	}
}
