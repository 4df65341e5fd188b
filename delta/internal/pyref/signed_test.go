package pyref

import "testing"

// TestSignedTriangles checks the signed reference on a hand-made graph:
// triangle 0-1-2 with one negative edge (unbalanced), triangle 0-2-3 with
// two (balanced), and a negative pendant 3-4.
func TestSignedTriangles(t *testing.T) {
	g := Graph{Nodes: 5, Edges: [][2]uint32{{0, 1}, {1, 2}, {0, 2}, {2, 3}, {0, 3}, {3, 4}}, Neg: []bool{false, true, false, true, true, true}}
	var b Batch
	r := b.SignedTriangles(g)
	if err := b.Run(); err != nil {
		t.Fatal(err)
	}
	want := [][4]uint64{{2, 1, 1, 1}, {1, 1, 0, 1}, {1, 2, 1, 1}, {0, 3, 1, 0}, {0, 1, 0, 0}}
	for x, w := range want {
		if (*r)[x] != w {
			t.Fatalf("node %d: %v, want %v", x, (*r)[x], w)
		}
	}
}
