package generic

import (
	"fmt"
	"math/rand/v2"
	"testing"

	"orbitwatch/delta"
)

// TestNoAllocationPerEvent checks that, once its scratch buffers have
// grown to the graph, an engine allocates nothing per event. The graph is
// left as it is (roaring allocates containers when it changes): the engine
// is asked for the changes of deleting present edges and of inserting
// absent ones, and testing.AllocsPerRun must say 0.
func TestNoAllocationPerEvent(t *testing.T) {
	for _, c := range []struct {
		kind delta.Kind
		k    int
	}{{delta.Directed, 3}, {delta.Directed, 4}, {delta.Undirected, 4}, {delta.Undirected, 5}} {
		cat := mustCatalog(t, c.kind, c.k)
		for name, eng := range map[string]delta.Engine{"engine": NewEngine(cat), "enumerator": NewEnumerator(cat)} {
			t.Run(fmt.Sprintf("%s-%v-k%d", name, c.kind, c.k), func(t *testing.T) {
				g := delta.NewGraph(c.kind)
				rng := rand.New(rand.NewPCG(3, uint64(c.k)))
				for g.NumEdges() < 300 {
					u, v := uint32(rng.IntN(80)), uint32(rng.IntN(80))
					if u != v && !g.HasEdge(u, v) {
						g.Link(u, v)
					}
				}
				var edges, absent [][2]uint32
				g.ForEachEdge(func(u, v uint32, _ uint32) { edges = append(edges, [2]uint32{u, v}) })
				for len(absent) < 40 {
					u, v := uint32(rng.IntN(80)), uint32(rng.IntN(80))
					if u != v && !g.HasEdge(u, v) {
						absent = append(absent, [2]uint32{u, v})
					}
				}
				var emits int
				emit := func(uint32, int, int64) { emits++ }
				churnAll := func() {
					for i := range absent {
						eng.Delete(g, edges[i][0], edges[i][1], emit)
						eng.Insert(g, absent[i][0], absent[i][1], emit)
					}
				}
				churnAll() // grow the scratch buffers
				if a := testing.AllocsPerRun(5, churnAll); a != 0 || emits == 0 {
					t.Fatalf("%v allocations per 80 events, %d changes emitted", a, emits)
				}
			})
		}
	}
}
