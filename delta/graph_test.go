package delta

import (
	"errors"
	"testing"
)

func TestGraphMultiplicity(t *testing.T) {
	for _, kind := range []Kind{Undirected, Directed} {
		g := NewGraph(kind)
		steps := []struct {
			add     bool
			u, v    uint32
			changed bool
			err     error
			mult    uint32
		}{
			{true, 0, 1, true, nil, 1},
			{true, 0, 1, false, nil, 2},
			{false, 0, 1, false, nil, 1},
			{false, 0, 1, true, nil, 0},
			{false, 0, 1, false, ErrAbsent, 0},
			{true, 2, 2, false, ErrSelfLoop, 0},
			{true, 3, 1, true, nil, 1},
		}
		for i, s := range steps {
			var changed bool
			var err error
			if s.add {
				changed, err = g.Increment(s.u, s.v)
			} else {
				changed, err = g.Decrement(s.u, s.v)
			}
			if changed != s.changed || !errors.Is(err, s.err) {
				t.Fatalf("%v step %d: changed %v err %v, want %v %v", kind, i, changed, err, s.changed, s.err)
			}
			if m := g.Multiplicity(s.u, s.v); m != s.mult {
				t.Fatalf("%v step %d: multiplicity %d, want %d", kind, i, m, s.mult)
			}
		}
		if g.NumEdges() != 1 {
			t.Fatalf("%v: %d edges, want 1", kind, g.NumEdges())
		}
		if kind == Undirected && !g.HasEdge(1, 3) {
			t.Fatalf("undirected edge 3-1 not symmetric")
		}
		if kind == Directed && (g.HasEdge(1, 3) || !g.In(1).Contains(3)) {
			t.Fatalf("directed arc 3→1 stored wrongly")
		}
	}
}

func TestVectorsAddGuards(t *testing.T) {
	v := NewVectors(2, 3)
	if err := v.Add(1, 2, 5); err != nil {
		t.Fatal(err)
	}
	var ce *CountError
	if err := v.Add(1, 2, -6); !errors.As(err, &ce) || v.Get(1, 2) != 5 {
		t.Fatalf("negative count not refused: %v, count %d", err, v.Get(1, 2))
	}
	v.Set(0, 0, ^uint64(0))
	if err := v.Add(0, 0, 1); !errors.As(err, &ce) {
		t.Fatalf("overflow not refused: %v", err)
	}
}

// A star one leaf past MaxRecountDegree is refused by name; one at the
// bound, and the same graph after the extra leaf leaves, are not. A
// directed star counts a node joined both ways once.
func TestCheckRecount(t *testing.T) {
	for _, kind := range []Kind{Undirected, Directed} {
		g := NewGraph(kind)
		g.Grow(MaxRecountDegree + 2)
		for leaf := uint32(1); leaf <= MaxRecountDegree; leaf++ {
			g.Link(0, leaf)
		}
		if kind == Directed {
			g.Link(1, 0) // both ways: still one neighbour
		}
		if err := CheckRecount(g); err != nil {
			t.Fatalf("%v: degree %d refused: %v", kind, MaxRecountDegree, err)
		}
		g.Link(0, MaxRecountDegree+1)
		err := CheckRecount(g)
		var de *DegreeError
		if !errors.As(err, &de) || de.Node != 0 || de.Degree != MaxRecountDegree+1 {
			t.Fatalf("%v: degree %d: got %v, want node 0 refused with that degree", kind, MaxRecountDegree+1, err)
		}
		g.Unlink(0, MaxRecountDegree+1)
		if err := CheckRecount(g); err != nil {
			t.Fatalf("%v: after the leaf left: %v", kind, err)
		}
	}
}
