package generic

import (
	"fmt"
	"math/rand/v2"
	"testing"

	"orbitwatch/delta"
	"orbitwatch/delta/undirected"
)

// TestSameAsSpecialised replays random undirected streams through the
// generic engines on the 2–4 node catalog and through the specialised
// engine of delta/undirected (orbit equations, a code path that shares
// nothing with this package) and demands equal vectors at every
// checkpoint, and equal per-event change sums. Both number orbits by
// Pržulj 2007, so the vectors compare index by index.
func TestSameAsSpecialised(t *testing.T) {
	for _, k := range []int{3, 4} {
		for _, size := range []struct{ nodes, steps int }{{12, 500}, {50, 800}, {200, 1500}} {
			t.Run(fmt.Sprintf("k%d-n%d", k, size.nodes), func(t *testing.T) {
				cat := mustCatalog(t, delta.Undirected, k)
				spec := undirected.NewEngine(k)
				if spec.NumOrbits() != cat.NumOrbits() {
					t.Fatalf("specialised engine has %d orbits, catalog %d", spec.NumOrbits(), cat.NumOrbits())
				}
				states := []*state{newState(t, spec), newState(t, NewEngine(cat)), newState(t, NewEnumerator(cat))}
				rng := rand.New(rand.NewPCG(uint64(k), uint64(size.nodes)))
				checks := 0
				randomStream(rng, size.nodes, size.steps, 50, states, func(step int) {
					for _, s := range states[1:] {
						sameVectors(t, fmt.Sprintf("after %d events", step), s.vec, states[0].vec)
					}
					checks++
				})
				var total uint64
				for x := 0; x < states[0].vec.NumNodes(); x++ {
					for _, c := range states[0].vec.Row(uint32(x)) {
						total += c
					}
				}
				if checks == 0 || total == 0 {
					t.Fatalf("%d checks, total count %d: the stream tested nothing", checks, total)
				}
			})
		}
	}
}
