package signed

import (
	"fmt"
	"testing"

	"orbitwatch/delta"
	"orbitwatch/delta/conformance"
)

// TestConformance runs the shared stream-replay suite (incremental ==
// recount == brute at every checkpoint, Derive and Restore from the
// records, networkx's signed degrees and balanced and unbalanced
// triangles, igraph's motifs of the graph without signs) at thresholds
// that make nodes heavy all the time, hardly ever, and never.
func TestConformance(t *testing.T) {
	for _, theta := range []int{1, 3, 5, DefaultHeavy} {
		t.Run(fmt.Sprint("theta=", theta), func(t *testing.T) {
			conformance.Run(t, conformance.Subject{
				Name:    fmt.Sprintf("signed 2–3, θ = %d", theta),
				New:     func() delta.Counter { return NewThreshold(theta) },
				Recount: NewRecounter(),
			})
		})
	}
}
