package directed

import (
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
