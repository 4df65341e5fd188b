package generic

import (
	"fmt"
	"math/rand/v2"
	"runtime"
	"testing"

	"orbitwatch/delta"
)

// TestRecountParallel recounts graphs large enough to be split among four
// workers (GOMAXPROCS is raised for the test, so the merge runs even on a
// one-core machine) and holds the result against the vectors the engine
// built edge by edge, and against a recount with one worker.
func TestRecountParallel(t *testing.T) {
	for _, c := range []struct {
		kind delta.Kind
		k    int
	}{{delta.Undirected, 4}, {delta.Undirected, 5}, {delta.Directed, 3}, {delta.Directed, 4}} {
		t.Run(fmt.Sprintf("%v-k%d", c.kind, c.k), func(t *testing.T) {
			cat := mustCatalog(t, c.kind, c.k)
			s := newState(t, NewEngine(cat))
			rng := rand.New(rand.NewPCG(11, uint64(c.k)))
			const nodes = 600
			for s.g.NumEdges() < 1500 {
				// Low ids are hubs: one end is drawn from a shrinking range.
				u := uint32(rng.IntN(1 + rng.IntN(nodes)))
				s.apply(true, u, uint32(rng.IntN(nodes)))
			}
			rec := NewRecounter(cat)
			prev := runtime.GOMAXPROCS(4)
			parallel := rec.Recount(s.g)
			runtime.GOMAXPROCS(1)
			single := rec.Recount(s.g)
			runtime.GOMAXPROCS(prev)
			sameVectors(t, "recount with 4 workers vs engine", parallel, s.vec)
			sameVectors(t, "recount with 1 worker vs engine", single, s.vec)
		})
	}
}
