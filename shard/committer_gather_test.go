package shard

import (
	"testing"
	"time"

	"orbitwatch/delta"
	"orbitwatch/storage"
)

// TestCommitterGathers: with Gather set, cuts handed over one by one in
// quick succession are made durable in a few groups, not one sync each,
// and every one of them is durable after Close, as without it.
func TestCommitterGathers(t *testing.T) {
	for _, gather := range []time.Duration{0, 400 * time.Millisecond} {
		st, err := storage.Open(t.TempDir(), storage.Settings{Kind: delta.Undirected, MaxNodes: 3, NumOrbits: 4})
		if err != nil {
			t.Fatal(err)
		}
		c := NewCommitter(st, 64)
		c.Gather = gather
		t0 := time.Date(2026, 3, 1, 0, 0, 0, 0, time.UTC)
		const cuts = 12
		for i := range cuts {
			time.Sleep(30 * time.Millisecond)
			if err := c.Put(&storage.Checkpoint{Seq: uint64(i + 1), Watermark: t0.Add(time.Duration(i) * time.Minute), Blobs: map[string][]byte{}}); err != nil {
				t.Fatal(err)
			}
		}
		if err := c.Close(); err != nil {
			t.Fatal(err)
		}
		groups, _ := c.Busy()
		if st.Seq() != cuts || len(st.Checkpoints()) != cuts {
			t.Fatalf("gather %v: store at %d with %d cuts, want %d", gather, st.Seq(), len(st.Checkpoints()), cuts)
		}
		if gather > 0 && groups > 3 {
			t.Fatalf("gather %v: %d groups for %d cuts 30 ms apart", gather, groups, cuts)
		}
		st.Close()
	}
}
