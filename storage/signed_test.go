package storage

import (
	"testing"
	"time"

	"orbitwatch/delta"
)

// TestSignedRoundTrip commits signed pairs to a real Badger directory and
// reads them back at each checkpoint: LoadAt rebuilds both multiplicities
// of every pair, Source reports LinkNeg for a negative pair (one open
// dispute marks it, whatever its positive multiplicity), and a pair whose
// both multiplicities reach zero is gone.
func TestSignedRoundTrip(t *testing.T) {
	dir := t.TempDir()
	st, err := Open(dir, Settings{Kind: delta.Signed, MaxNodes: 3, NumOrbits: 15})
	if err != nil {
		t.Fatal(err)
	}
	wm := time.Date(2026, 5, 1, 0, 0, 0, 0, time.UTC)
	cps := []*Checkpoint{
		{Seq: 10, Watermark: wm, Names: []string{"a", "b", "c", "d"}, Edges: []EdgeChange{
			{U: 0, V: 1, Mult: 2}, {U: 2, V: 1, Mult: 1, Neg: 3}, {U: 2, V: 3, Neg: 1},
		}},
		{Seq: 20, Watermark: wm.Add(time.Hour), Edges: []EdgeChange{
			{U: 1, V: 0, Mult: 1, Neg: 1}, {U: 1, V: 2, Mult: 1}, {U: 3, V: 2},
		}},
	}
	type pair struct {
		u, v uint32
		p, n uint32
	}
	want := map[uint64][]pair{
		10: {{0, 1, 2, 0}, {1, 2, 1, 3}, {2, 3, 0, 1}, {0, 2, 0, 0}},
		20: {{0, 1, 1, 1}, {1, 2, 1, 0}, {2, 3, 0, 0}, {0, 2, 0, 0}},
	}
	for _, cp := range cps {
		if err := st.Commit(cp); err != nil {
			t.Fatal(err)
		}
	}
	check := func(st *Store) {
		t.Helper()
		for seq, pairs := range want {
			s, err := st.LoadAt(seq)
			if err != nil {
				t.Fatal(err)
			}
			src, err := st.SourceAt(seq)
			if err != nil {
				t.Fatal(err)
			}
			for _, p := range pairs {
				gp, gn := s.Graph.Multiplicities(p.u, p.v)
				if gp != p.p || gn != p.n {
					t.Fatalf("seq %d: pair %d-%d loaded as %d, %d, want %d, %d", seq, p.u, p.v, gp, gn, p.p, p.n)
				}
				wantLink := s.Graph.Links(p.u, p.v)
				if (p.p+p.n > 0) != (wantLink != 0) || (p.n > 0) != (wantLink&delta.LinkNeg != 0) {
					t.Fatalf("seq %d: pair %d-%d: graph links %b", seq, p.u, p.v, wantLink)
				}
				for _, e := range [2][2]uint32{{p.u, p.v}, {p.v, p.u}} {
					l, err := src.Linked(e[0], e[1])
					if err != nil || l != wantLink {
						t.Fatalf("seq %d: Linked(%d, %d) = %b, %v; want %b", seq, e[0], e[1], l, err, wantLink)
					}
					adj, err := src.Adjacent(e[0], nil)
					if err != nil {
						t.Fatal(err)
					}
					found := delta.Link(0)
					for _, a := range adj {
						if a.Node == e[1] {
							found = a.Links
						}
					}
					if found != wantLink {
						t.Fatalf("seq %d: Adjacent(%d) gives %d as %b, want %b (%v)", seq, e[0], e[1], found, wantLink, adj)
					}
				}
			}
			src.Close()
		}
	}
	check(st)
	if err := st.Close(); err != nil {
		t.Fatal(err)
	}
	again, err := Open(dir, Settings{Kind: delta.Signed, MaxNodes: 3, NumOrbits: 15})
	if err != nil {
		t.Fatal(err)
	}
	defer again.Close()
	check(again)
	if _, err := Open(dir, Settings{Kind: delta.Undirected, MaxNodes: 3, NumOrbits: 15}); err == nil {
		t.Fatal("a signed store opened as undirected")
	}
}

// TestUnsignedStoreRefusesNegatives: a negative multiplicity in a store of
// another kind is a programmer error.
func TestUnsignedStoreRefusesNegatives(t *testing.T) {
	st, err := Open(t.TempDir(), Settings{Kind: delta.Undirected, MaxNodes: 3, NumOrbits: 4})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	defer func() {
		if recover() == nil {
			t.Fatal("no panic")
		}
	}()
	st.Commit(&Checkpoint{Seq: 1, Names: []string{"a", "b"}, Edges: []EdgeChange{{U: 0, V: 1, Neg: 1}}})
}
