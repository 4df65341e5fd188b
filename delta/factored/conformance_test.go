package factored

import (
	"fmt"
	"testing"

	"orbitwatch/delta"
	"orbitwatch/delta/conformance"
	"orbitwatch/delta/undirected"
)

// TestConformance runs the shared stream-replay suite (derived vectors,
// vectors derived from the records alone, a restored counter and the
// recount of delta/undirected against delta/brute at every checkpoint,
// plus the networkx and igraph references) for both sizes, with the
// product's threshold and with thresholds so low that nodes change sides
// all the time.
func TestConformance(t *testing.T) {
	for _, k := range []int{3, 4} {
		for _, theta := range []int{1, 3, DefaultHeavy} {
			conformance.Run(t, conformance.Subject{
				Name:    fmt.Sprintf("factored k%d heavy from degree %d", k, theta),
				New:     func() delta.Counter { return NewThreshold(k, theta) },
				Recount: undirected.NewRecounter(k),
			})
		}
	}
}
