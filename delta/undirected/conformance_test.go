package undirected

import (
	"testing"

	"orbitwatch/delta/conformance"
)

// TestConformance runs the shared stream-replay suite (incremental sums vs
// this package's recount vs delta/brute, plus networkx and igraph
// references) for both sizes this package counts.
func TestConformance(t *testing.T) {
	for _, k := range []int{3, 4} {
		conformance.Run(t, conformance.Subject{
			Name:    "undirected specialised",
			Engine:  NewEngine(k),
			Recount: NewRecounter(k),
		})
	}
}
