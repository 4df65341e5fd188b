package storage

import (
	"errors"
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
}

// TestRoundTrip commits checkpoints of a random scenario (both kinds),
// reopening the store between some of them, and demands that Load,
// VectorAt, ForEachAt, History, SeqAtTime and Checkpoints give back exactly
// what the model held at each checkpoint.
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
			for i, to := range steps {
				m.run(to)
				if err := st.Commit(m.checkpoint()); err != nil {
					t.Fatal(err)
				}
				snaps = append(snaps, snapshot{m.seq, m.watermark(), names(m.dict), m.vec.Clone()})
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
				checkState(t, s, m)
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
			checkState(t, s, m)
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
			for x := 0; x < len(sn.names); x += 7 {
				vec, cut, wm, err := st.VectorAt(sn.names[x], at)
				if err != nil {
					t.Fatal(err)
				}
				if cut != sn.seq || !wm.Equal(sn.wm) || !slices.Equal(vec, sn.vec.Row(uint32(x))) {
					t.Fatalf("VectorAt(%q, %d) = %v cut %d, want %v cut %d", sn.names[x], at, vec, cut, sn.vec.Row(uint32(x)), sn.seq)
				}
			}
		}
		n := 0
		cut, err := st.ForEachAt(sn.seq, func(node string, vec []uint64) error {
			if node != sn.names[n] || !slices.Equal(vec, sn.vec.Row(uint32(n))) {
				t.Fatalf("ForEachAt(%d) node %d = %q %v, want %q %v", sn.seq, n, node, vec, sn.names[n], sn.vec.Row(uint32(n)))
			}
			n++
			return nil
		})
		if err != nil || cut != sn.seq || n != len(sn.names) {
			t.Fatalf("ForEachAt(%d): cut %d, %d nodes, err %v; want %d nodes", sn.seq, cut, n, err, len(sn.names))
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
	if _, _, _, err := st.VectorAt(snaps[0].names[0], snaps[0].seq-1); !errors.Is(err, wantErr) {
		t.Fatalf("VectorAt before the first readable checkpoint: %v, want %v", err, wantErr)
	}
	last := snaps[len(snaps)-1]
	if _, _, _, err := st.VectorAt("acct-no-such", last.seq); !errors.Is(err, ErrUnknownNode) {
		t.Fatalf("VectorAt of an unknown node: %v, want ErrUnknownNode", err)
	}
	// History of a few nodes over an inner range and the whole range.
	for x := 0; x < len(last.names); x += 37 {
		for _, r := range [][2]uint64{{0, last.seq}, {snaps[len(snaps)/4].seq, snaps[3*len(snaps)/4].seq - 1}} {
			checkHistory(t, st, snaps, last.names[x], uint32(x), r[0], r[1])
		}
	}
}

func checkHistory(t *testing.T, st *Store, snaps []snapshot, name string, x uint32, from, to uint64) {
	t.Helper()
	h, err := st.History(name, from, to)
	if err != nil {
		t.Fatal(err)
	}
	var want []Version
	for i, sn := range snaps {
		if sn.seq < from || sn.seq > to || int(x) >= len(sn.names) {
			continue
		}
		changed := i == 0 || int(x) >= len(snaps[i-1].names) || !slices.Equal(snaps[i-1].vec.Row(x), sn.vec.Row(x))
		want = append(want, Version{Seq: sn.seq, Watermark: sn.wm, Vector: sn.vec.Row(x), Changed: changed})
	}
	if len(h) != len(want) {
		t.Fatalf("History(%q, %d, %d): %d versions, want %d", name, from, to, len(h), len(want))
	}
	for i := range want {
		if h[i].Seq != want[i].Seq || !h[i].Watermark.Equal(want[i].Watermark) || !slices.Equal(h[i].Vector, want[i].Vector) || h[i].Changed != want[i].Changed {
			t.Fatalf("History(%q) version %d = %+v, want %+v", name, i, h[i], want[i])
		}
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
		{"foreign dictionary", func(cp *Checkpoint) {
			d := NewDict()
			for _, n := range cp.Dict.names {
				d.Intern(n)
			}
			cp.Dict = d
		}},
	}
	for _, c := range cases {
		cp := *m.checkpoint()
		m.edges, m.nodes, m.changed = cp.Edges, cp.Nodes, cp.Blobs
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
	checkState(t, s, m)
}
