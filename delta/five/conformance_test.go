package five_test

import (
	"os"
	"testing"

	"orbitwatch/delta"
	"orbitwatch/delta/conformance"
	"orbitwatch/delta/five"
)

// TestConformance replays the suite's streams: at every checkpoint the
// Counter's vectors, the vectors derived from its records, a restored
// Counter's and the static recount's equal delta/brute's; on the final
// graphs igraph's motifs_randesu(size=3..5) and networkx's degree and
// triangles agree (delta/conformance names each source).
func TestConformance(t *testing.T) {
	if os.Getenv("ORBITWATCH_PYTHON") == "" {
		t.Setenv("ORBITWATCH_PYTHON", "/usr/bin/python3")
	}
	conformance.Run(t, conformance.Subject{
		Name:    "five",
		New:     func() delta.Counter { return five.New() },
		Recount: five.NewRecounter(five.Options{}),
	})
}
