package storage

import (
	"errors"
	"maps"
	"slices"
	"testing"
	"time"

	"orbitwatch/delta"
)

// snapshot is what the model held at one checkpoint.
type snapshot struct {
	seq   uint64
	wm    time.Time
	names []string
	vec   *delta.Vectors
	g     *delta.Graph
}

// TestRoundTrip commits checkpoints of a random scenario (both kinds),
// reopening the store between some of them and committing some in groups,
// and demands that Load, LoadAt, SourceAt (records, adjacency, links),
// NodeAt, RecordChanges, SeqAtTime and Checkpoints give back exactly what
// the model held at each checkpoint.
func TestRoundTrip(t *testing.T) {
	kinds := []Settings{
		undirected4,
		{Kind: delta.Directed, MaxNodes: 3, NumOrbits: 33},
	}
	for _, set := range kinds {
		t.Run(set.Kind.String(), func(t *testing.T) {
			dir := t.TempDir()
			st := mustOpen(t, dir, set)
			defer func() { st.Close() }()
			m := newModel(set.Kind, set.NumOrbits, 7, 300)
			var snaps []snapshot
			steps := []uint64{1, 40, 41, 500, 2000, 2001, 3500, 5000}
			var group []*Checkpoint
			for i, to := range steps {
				m.run(to)
				group = append(group, m.checkpoint())
				snaps = append(snaps, snapshot{m.seq, m.watermark(), names(m.dict), m.vec.Clone(), m.g.Clone()})
				if i == 2 || i == 4 {
					continue // committed with the next: a group of two
				}
				if err := st.Commit(group...); err != nil {
					t.Fatal(err)
				}
				group = nil
				if i%3 == 2 {
					if err := st.Close(); err != nil {
						t.Fatal(err)
					}
					st = mustOpen(t, dir, set)
				}
				s, err := st.Load()
				if err != nil {
					t.Fatal(err)
				}
				checkState(t, st, s, m)
			}
			checkAsOf(t, st, snaps)
			if err := st.Close(); err != nil {
				t.Fatal(err)
			}
			ro, err := OpenReadOnly(dir)
			if err != nil {
				t.Fatal(err)
			}
			st = ro
			if ro.Settings() != set {
				t.Fatalf("read-only settings %+v, want %+v", ro.Settings(), set)
			}
			checkAsOf(t, ro, snaps)
			s, err := ro.Load()
			if err != nil {
				t.Fatal(err)
			}
			checkState(t, ro, s, m)
			if err := ro.Commit(m.checkpoint()); err == nil {
				t.Fatal("commit on a read-only store succeeded")
			}
		})
	}
}

// checkAsOf holds every as-of read against the snapshots.
func checkAsOf(t *testing.T, st *Store, snaps []snapshot) {
	t.Helper()
	cps := st.Checkpoints()
	if len(cps) != len(snaps) {
		t.Fatalf("%d checkpoints listed, %d committed", len(cps), len(snaps))
	}
	for i, sn := range snaps {
		if cps[i].Seq != sn.seq || !cps[i].Watermark.Equal(sn.wm) || cps[i].Nodes != len(sn.names) {
			t.Fatalf("checkpoint %d listed as %+v, want seq %d wm %v nodes %d", i, cps[i], sn.seq, sn.wm, len(sn.names))
		}
		// Reads at the checkpoint and between it and the next one see it.
		for _, at := range []uint64{sn.seq, sn.seq + 1} {
			if i+1 < len(snaps) && at >= snaps[i+1].seq {
				continue
			}
			checkSource(t, st, sn, at)
		}
		s, err := st.LoadAt(sn.seq)
		if err != nil {
			t.Fatal(err)
		}
		if s.Seq != sn.seq || !slices.Equal(names(s.Dict), sn.names) || !slices.Equal(edgeList(s.Graph), edgeList(sn.g)) {
			t.Fatalf("LoadAt(%d): seq %d, %d names, %d edges; want %d names %d edges", sn.seq, s.Seq, s.Dict.Len(), s.Graph.NumEdges(), len(sn.names), sn.g.NumEdges())
		}
		if got, ok := st.SeqAtTime(sn.wm); !ok || got < sn.seq || (i+1 < len(snaps) && got >= snaps[i+1].seq && !snaps[i+1].wm.Equal(sn.wm)) {
			t.Fatalf("SeqAtTime(%v) = %d %v, want the last checkpoint with that watermark (≥ %d)", sn.wm, got, ok, sn.seq)
		}
		if i+1 < len(snaps) && snaps[i+1].wm.After(sn.wm.Add(time.Second)) {
			if got, ok := st.SeqAtTime(snaps[i+1].wm.Add(-time.Second)); !ok || got != sn.seq {
				t.Fatalf("SeqAtTime just before checkpoint %d's watermark = %d %v, want %d", snaps[i+1].seq, got, ok, sn.seq)
			}
		}
	}
	if _, ok := st.SeqAtTime(snaps[0].wm.Add(-time.Second)); ok {
		t.Fatal("SeqAtTime before the first watermark found a checkpoint")
	}
	wantErr := ErrNoCheckpoint
	if st.Floor() > 0 {
		wantErr = ErrRetention
	}
	if _, err := st.SourceAt(snaps[0].seq - 1); !errors.Is(err, wantErr) {
		t.Fatalf("SourceAt before the first readable checkpoint: %v, want %v", err, wantErr)
	}
	last := snaps[len(snaps)-1]
	if _, _, err := st.NodeAt("acct-no-such", last.seq); !errors.Is(err, ErrUnknownNode) {
		t.Fatalf("NodeAt of an unknown node: %v, want ErrUnknownNode", err)
	}
	// Record changes of a few nodes over an inner range and the whole range.
	for x := 0; x < len(last.names); x += 37 {
		for _, r := range [][2]uint64{{0, last.seq}, {snaps[len(snaps)/4].seq, snaps[3*len(snaps)/4].seq - 1}} {
			checkChanges(t, st, snaps, uint32(x), r[0], r[1])
		}
	}
}

// checkSource holds a Source at at against the snapshot: every node's
// name, number, record, neighbours and links.
func checkSource(t *testing.T, st *Store, sn snapshot, at uint64) {
	t.Helper()
	src, err := st.SourceAt(at)
	if err != nil {
		t.Fatal(err)
	}
	defer src.Close()
	if src.Checkpoint().Seq != sn.seq {
		t.Fatalf("SourceAt(%d) reads checkpoint %d, want %d", at, src.Checkpoint().Seq, sn.seq)
	}
	vec := make([]uint64, sn.vec.NumOrbits())
	var adj []delta.Adj
	for x := 0; x < len(sn.names); x += 7 {
		n, err := src.Node(sn.names[x])
		if name, nerr := src.Name(uint32(x)); err != nil || nerr != nil || n != uint32(x) || name != sn.names[x] {
			t.Fatalf("at %d: node %q is %d (%v), name of %d is %q (%v)", at, sn.names[x], n, err, x, name, nerr)
		}
		b, err := src.Record(uint32(x))
		if err == nil {
			err = delta.DecodeCounts(b, vec)
		}
		if err != nil || !slices.Equal(vec, sn.vec.Row(uint32(x))) {
			t.Fatalf("at %d: record of %d = %v (%v), want %v", at, x, vec, err, sn.vec.Row(uint32(x)))
		}
		if adj, err = src.Adjacent(uint32(x), adj); err != nil {
			t.Fatal(err)
		}
		want := sn.g.Neighbors(uint32(x)).ToArray()
		if len(adj) != len(want) {
			t.Fatalf("at %d: node %d has %d neighbours stored, %d in the graph", at, x, len(adj), len(want))
		}
		for i, a := range adj {
			l, err := src.Linked(uint32(x), a.Node)
			if err != nil || a.Node != want[i] || a.Links != sn.g.Links(uint32(x), a.Node) || l != a.Links {
				t.Fatalf("at %d: neighbour %d of %d = %+v (linked %v, %v), want %d links %v", at, i, x, a, l, err, want[i], sn.g.Links(uint32(x), want[i]))
			}
		}
		if l, err := src.Linked(uint32(x), uint32(x)); err != nil || l != 0 {
			t.Fatalf("at %d: node %d linked to itself: %v %v", at, x, l, err)
		}
	}
}

// checkChanges holds RecordChanges of node x to the snapshots at which its
// record was written (a changed record, or its first).
func checkChanges(t *testing.T, st *Store, snaps []snapshot, x uint32, from, to uint64) {
	t.Helper()
	got, err := st.RecordChanges(x, from, to)
	if err != nil {
		t.Fatal(err)
	}
	var want []uint64
	for i, sn := range snaps {
		if sn.seq < from || sn.seq > to || int(x) >= len(sn.names) {
			continue
		}
		var prev []uint64
		if i > 0 && int(x) < len(snaps[i-1].names) {
			prev = snaps[i-1].vec.Row(x)
		}
		if prev == nil && !slices.ContainsFunc(sn.vec.Row(x), func(c uint64) bool { return c != 0 }) {
			continue // never written: still all zero
		}
		if prev == nil || !slices.Equal(prev, sn.vec.Row(x)) {
			want = append(want, sn.seq)
		}
	}
	var seqs []uint64
	for _, c := range got {
		seqs = append(seqs, c.Seq)
	}
	if !slices.Equal(seqs, want) {
		t.Fatalf("RecordChanges(%d, %d, %d) = %v, want %v", x, from, to, seqs, want)
	}
}

// TestCommitRejects: bad checkpoints are errors that write nothing.
func TestCommitRejects(t *testing.T) {
	st := mustOpen(t, t.TempDir(), undirected4)
	defer st.Close()
	m := newModel(delta.Undirected, 15, 3, 50)
	m.run(100)
	if err := st.Commit(m.checkpoint()); err != nil {
		t.Fatal(err)
	}
	m.run(150)
	cases := []struct {
		name string
		edit func(cp *Checkpoint)
	}{
		{"same seq", func(cp *Checkpoint) { cp.Seq = 100 }},
		{"older seq", func(cp *Checkpoint) { cp.Seq = 5 }},
		{"watermark back", func(cp *Checkpoint) { cp.Watermark = cp.Watermark.Add(-time.Hour) }},
		{"watermark out of range", func(cp *Checkpoint) { cp.Watermark = time.Date(3000, 1, 1, 0, 0, 0, 0, time.UTC) }},
	}
	for _, c := range cases {
		edges, nodes, changed, named, keyCh := slices.Clone(m.edges), slices.Clone(m.nodes), maps.Clone(m.changed), m.named, slices.Clone(m.keyCh)
		cp := *m.checkpoint()
		m.edges, m.nodes, m.changed, m.named, m.keyCh = edges, nodes, changed, named, keyCh
		c.edit(&cp)
		if err := st.Commit(&cp); err == nil {
			t.Fatalf("%s: commit succeeded", c.name)
		}
		if st.Seq() != 100 {
			t.Fatalf("%s: store moved to %d", c.name, st.Seq())
		}
	}
	if err := st.Commit(m.checkpoint()); err != nil {
		t.Fatalf("good commit after rejects: %v", err)
	}
	s, err := st.Load()
	if err != nil {
		t.Fatal(err)
	}
	checkState(t, st, s, m)
}
