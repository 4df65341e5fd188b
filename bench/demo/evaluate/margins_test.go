package evaluate

import (
	"testing"
	"time"

	"orbitwatch/bench/demo"
	"orbitwatch/delta"
	"orbitwatch/shard"
)

// TestMargins: on the small scenario no background node comes up to the
// fire level of any orbit rule of any kind; the directed fan-out rule's
// highest background growth is the payroll provider's while it takes on
// its new client's staff (so the margin sees the quiet pattern it is to
// leave alone, above 1 and below 8), and no background node is on a
// one-way cycle.
func TestMargins(t *testing.T) {
	sc := demo.Generate(demo.SmallConfig())
	payroll := sc.Pattern("payroll").Nodes[0]
	for _, c := range []struct {
		kind delta.Kind
		k    int
	}{{delta.Undirected, 4}, {delta.Directed, 3}, {delta.Directed, 4}, {delta.Signed, 3}} {
		counting, err := shard.NewCounting(c.kind, c.k)
		if err != nil {
			t.Fatal(err)
		}
		ac, err := demo.AlertConfig(counting.Catalog)
		if err != nil {
			t.Fatal(err)
		}
		ms, err := Margins(sc, counting, ac, time.Minute)
		if err != nil {
			t.Fatal(err)
		}
		for _, m := range ms {
			if m.HasScore && m.Score >= m.Rule.Fire {
				t.Errorf("%v 2–%d: %s scored %v on background node %s at %s, fire %v", c.kind, c.k, m.Rule.Name, m.Score, m.Node, m.At, m.Rule.Fire)
			}
			switch {
			case c.kind == delta.Directed && m.Rule.Name == "fan-out":
				if m.Node != payroll || m.Score <= 1 {
					t.Errorf("%v 2–%d: fan-out's highest background growth %v on %s, want the payroll provider %s above 1", c.kind, c.k, m.Score, m.Node, payroll)
				}
			case m.Rule.Name == "round-trip" && m.Count != 0:
				t.Errorf("%v 2–%d: background node %s on %v one-way cycles", c.kind, c.k, m.CountNode, m.Count)
			}
		}
	}
}
