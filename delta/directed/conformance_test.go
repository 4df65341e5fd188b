package directed

import (
	"fmt"
	"testing"

	"orbitwatch/delta"
	"orbitwatch/delta/catalog"
	"orbitwatch/delta/conformance"
	"orbitwatch/delta/generic"
)

func mustCatalog(t testing.TB, k int) *catalog.Catalog {
	t.Helper()
	c, err := catalog.New(delta.Directed, k)
	if err != nil {
		t.Fatal(err)
	}
	return c
}

// TestTriadsConformance runs the shared stream-replay suite on the 2–3
// Counter: at every checkpoint its vectors, the vectors Derive reads from
// its records and the recount equal delta/brute, Changed names every
// changed record, a Restore goes on in its place, and networkx's triadic
// census and igraph's directed motifs agree (the suite's references).
func TestTriadsConformance(t *testing.T) {
	conformance.Run(t, conformance.Subject{
		Name:    "directed triads",
		New:     func() delta.Counter { return NewTriads() },
		Recount: generic.NewRecounter(mustCatalog(t, 3)),
	})
}

// TestRecountConformance holds the combinatorial recount to brute at every
// checkpoint of the shared suite, beside the eager generic engine on 2–4
// nodes (and beside Triads on 2–3, in TestTriadsWithRecount).
func TestRecountConformance(t *testing.T) {
	cat := mustCatalog(t, 4)
	conformance.Run(t, conformance.Subject{
		Name:    "directed recount 2–4 (beside the eager generic engine)",
		Engine:  generic.NewEngine(cat),
		Recount: NewRecounter(4),
	})
}

// TestTriadsWithRecount runs Triads with this package's 2–3 recount.
func TestTriadsWithRecount(t *testing.T) {
	conformance.Run(t, conformance.Subject{
		Name:    "directed triads with the combinatorial recount",
		New:     func() delta.Counter { return NewTriads() },
		Recount: NewRecounter(3),
	})
}

// TestQuadsConformance runs the shared suite on the factored 2–4 Counter
// with this package's recount, at two heavy thresholds: 4 makes most
// nodes of the suite's small streams heavy (codegree rows, heavy sums,
// nodes turning heavy and light again), 1<<20 none.
func TestQuadsConformance(t *testing.T) {
	for _, theta := range []int{4, 1 << 20} {
		t.Run(fmt.Sprintf("theta-%d", theta), func(t *testing.T) {
			conformance.Run(t, conformance.Subject{
				Name:    fmt.Sprintf("directed quads (heavy from degree %d)", theta),
				New:     func() delta.Counter { return NewQuads(theta) },
				Recount: NewRecounter(4),
			})
		})
	}
}
