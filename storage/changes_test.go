package storage

import (
	"cmp"
	"errors"
	"slices"
	"testing"

	"orbitwatch/delta"
)

// TestChangesBetween commits the model's scenario in uneven cuts, some of
// them flushes, and reads every cut's changes back from the versions:
// each equals what the cut wrote (names, pairs with their multiplicities
// after it, touched records), the flags come back, and replaying the
// changes from an empty graph gives the model's graph at every cut.
func TestChangesBetween(t *testing.T) {
	st := mustOpen(t, t.TempDir(), undirected4)
	defer st.Close()
	m := newModel(delta.Undirected, 15, 7, 300)
	var want []CutChanges
	var graphs []*delta.Graph
	for i, to := range []uint64{40, 41, 97, 250, 251, 600, 1000, 1400} {
		m.run(to)
		cp := m.checkpoint()
		cp.Flush = i%3 == 1
		c := CutChanges{CheckpointInfo: CheckpointInfo{Seq: cp.Seq, Watermark: cp.Watermark, Nodes: m.dict.Len(), Flush: cp.Flush}, Names: cp.Names}
		last := map[[2]uint32]uint32{}
		for _, e := range cp.Edges {
			last[[2]uint32{min(e.U, e.V), max(e.U, e.V)}] = e.Mult
		}
		for p, mult := range last {
			c.Edges = append(c.Edges, EdgeChange{U: p[0], V: p[1], Mult: mult})
		}
		sortEdges(c.Edges)
		for _, r := range cp.Records {
			c.Touched = append(c.Touched, r.Node)
		}
		slices.Sort(c.Touched)
		c.Touched = slices.Compact(c.Touched)
		want = append(want, c)
		graphs = append(graphs, m.g.Clone())
		if err := st.Commit(cp); err != nil {
			t.Fatal(err)
		}
	}
	got, err := st.ChangesBetween(0, st.Seq())
	if err != nil {
		t.Fatal(err)
	}
	if len(got) != len(want) {
		t.Fatalf("%d cuts read, %d committed", len(got), len(want))
	}
	g := delta.NewGraph(delta.Undirected)
	for i := range want {
		c := got[i]
		sortEdges(c.Edges)
		c.Touched = slices.Compact(c.Touched)
		if c.Seq != want[i].Seq || !c.Watermark.Equal(want[i].Watermark) || c.Nodes != want[i].Nodes || c.Flush != want[i].Flush {
			t.Fatalf("cut %d read as %+v, want %+v", i, c.CheckpointInfo, want[i].CheckpointInfo)
		}
		if !slices.Equal(c.Names, want[i].Names) || !slices.Equal(c.Edges, want[i].Edges) || !slices.Equal(c.Touched, want[i].Touched) {
			t.Fatalf("cut %d (seq %d): names %d/%d, pairs %d/%d, touched %d/%d read/written, or they differ", i, c.Seq, len(c.Names), len(want[i].Names), len(c.Edges), len(want[i].Edges), len(c.Touched), len(want[i].Touched))
		}
		g.Grow(c.Nodes)
		for _, e := range c.Edges {
			g.SetMultiplicities(e.U, e.V, e.Mult, 0)
		}
		if !slices.Equal(edgeList(g), edgeList(graphs[i])) {
			t.Fatalf("cut %d: the graph replayed from the changes differs from the model's", c.Seq)
		}
	}
	// A range starting at a cut holds the cuts after it only.
	tail, err := st.ChangesBetween(want[3].Seq, want[6].Seq)
	if err != nil || len(tail) != 3 || tail[0].Seq != want[4].Seq || tail[2].Seq != want[6].Seq {
		t.Fatalf("changes after cut %d up to %d: %d cuts, %v", want[3].Seq, want[6].Seq, len(tail), err)
	}
	// Below the retention floor the versions may be gone: refused.
	if err := st.SetDiscardBefore(want[5].Seq); err != nil {
		t.Fatal(err)
	}
	if _, err := st.ChangesBetween(want[2].Seq, st.Seq()); !errors.Is(err, ErrRetention) {
		t.Fatalf("changes from below the floor: %v, want ErrRetention", err)
	}
	if _, err := st.ChangesBetween(want[5].Seq, st.Seq()); err != nil {
		t.Fatalf("changes from the floor: %v", err)
	}
}

func sortEdges(es []EdgeChange) {
	slices.SortFunc(es, func(a, b EdgeChange) int {
		return cmp.Or(cmp.Compare(a.U, b.U), cmp.Compare(a.V, b.V))
	})
}
