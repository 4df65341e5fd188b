package generic

import (
	"fmt"
	"testing"

	"orbitwatch/delta"
	"orbitwatch/delta/conformance"
)

// TestConformance runs the shared stream-replay suite (incremental ==
// recount == brute at every checkpoint, plus the networkx and igraph
// references the suite calls) on both engines of this package, each with
// this package's recounter, for every kind and size the catalogs support.
func TestConformance(t *testing.T) {
	for _, c := range []struct {
		kind delta.Kind
		k    int
	}{
		{delta.Directed, 3}, {delta.Directed, 4},
		{delta.Undirected, 3}, {delta.Undirected, 4}, {delta.Undirected, 5},
		{delta.Signed, 3}, {delta.Signed, 4},
	} {
		cat := mustCatalog(t, c.kind, c.k)
		for _, s := range []struct {
			name string
			eng  delta.Engine
		}{{"engine", NewEngine(cat)}, {"enumerator", NewEnumerator(cat)}} {
			name := fmt.Sprintf("%s-%v-k%d", s.name, c.kind, c.k)
			t.Run(name, func(t *testing.T) {
				conformance.Run(t, conformance.Subject{Name: "generic " + name, Engine: s.eng, Recount: NewRecounter(cat)})
			})
		}
	}
}
