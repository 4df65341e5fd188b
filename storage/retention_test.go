package storage

import (
	"errors"
	"math"
	"testing"
	"time"

	badger "github.com/dgraph-io/badger/v4"

	"orbitwatch/delta"
)

// versionsAtOrBelow counts, over all record keys, the versions ≤ seq and
// the keys holding more than one of them.
func versionsAtOrBelow(t *testing.T, st *Store, seq uint64) (versions, keysWithOlder int) {
	t.Helper()
	txn := st.db.NewTransactionAt(math.MaxUint64, false)
	defer txn.Discard()
	it := txn.NewIterator(badger.IteratorOptions{Prefix: []byte{pRecord}, AllVersions: true})
	defer it.Close()
	var last []byte
	n := 0
	for it.Rewind(); it.Valid(); it.Next() {
		item := it.Item()
		if string(item.Key()) != string(last) {
			last, n = item.KeyCopy(nil), 0
		}
		if item.Version() <= seq {
			versions++
			if n++; n == 2 {
				keysWithOlder++
			}
		}
	}
	return versions, keysWithOlder
}

// TestRetention: after SetDiscardBefore reads below the floor fail with
// ErrRetention at once, reads at and above it stay exact, the floor
// survives a reopen, and a compaction physically drops the versions older
// than the latest one at or below the floor.
func TestRetention(t *testing.T) {
	dir := t.TempDir()
	st := mustOpen(t, dir, undirected4)
	m := newModel(delta.Undirected, 15, 5, 150)
	var snaps []snapshot
	for i := 1; i <= 10; i++ {
		m.run(uint64(i) * 400)
		if err := st.Commit(m.checkpoint()); err != nil {
			t.Fatal(err)
		}
		snaps = append(snaps, snapshot{m.seq, m.watermark(), names(m.dict), m.vec.Clone(), m.g.Clone()})
	}
	floor := snaps[5].seq
	if err := st.SetDiscardBefore(floor + 1); err != nil {
		t.Fatal(err)
	}
	if st.Floor() != floor {
		t.Fatalf("floor %d, want the checkpoint %d at or before the requested seq", st.Floor(), floor)
	}
	if err := st.SetDiscardBefore(snaps[2].seq); err != nil || st.Floor() != floor {
		t.Fatalf("lowering the floor: err %v, floor %d, want it kept at %d", err, st.Floor(), floor)
	}
	before, older := versionsAtOrBelow(t, st, floor)
	if older == 0 {
		t.Fatalf("before compaction no key has two versions at or below %d; the test cannot see a discard", floor)
	}
	// Close flushes the memtable and compacts level 0 at the discard
	// timestamp; Compact then merges any other levels.
	if err := st.Close(); err != nil {
		t.Fatal(err)
	}
	st = mustOpen(t, dir, undirected4)
	defer st.Close()
	if st.Floor() != floor {
		t.Fatalf("floor after reopen %d, want %d", st.Floor(), floor)
	}
	if err := st.Compact(); err != nil {
		t.Fatal(err)
	}
	after, older := versionsAtOrBelow(t, st, floor)
	if older != 0 || after >= before {
		t.Fatalf("after compaction %d versions at or below the floor (%d before), %d keys still with older ones", after, before, older)
	}
	t.Logf("versions at or below the floor: %d before compaction, %d after", before, after)
	if _, err := st.SourceAt(snaps[4].seq); !errors.Is(err, ErrRetention) {
		t.Fatalf("read below the floor: %v, want ErrRetention", err)
	}
	if _, err := st.LoadAt(floor - 1); !errors.Is(err, ErrRetention) {
		t.Fatalf("load below the floor: %v, want ErrRetention", err)
	}
	if _, ok := st.SeqAtTime(snaps[4].wm); ok {
		t.Fatal("SeqAtTime of a watermark below the floor found a checkpoint")
	}
	checkAsOf(t, st, snaps[5:])
	s, err := st.Load()
	if err != nil {
		t.Fatal(err)
	}
	checkState(t, st, s, m)
}

// TestGCLoop: the background value-log GC runs on its interval and Close
// stops it.
func TestGCLoop(t *testing.T) {
	st := mustOpen(t, t.TempDir(), undirected4)
	close(st.gcStop)
	<-st.gcDone
	st.startGC(5 * time.Millisecond)
	deadline := time.Now().Add(10 * time.Second)
	for st.gcRuns.Load() < 3 && time.Now().Before(deadline) {
		time.Sleep(5 * time.Millisecond)
	}
	if n := st.gcRuns.Load(); n < 3 {
		t.Fatalf("GC loop ran %d times in 10s at a 5ms interval", n)
	}
	if err := st.Close(); err != nil {
		t.Fatal(err)
	}
	select {
	case <-st.gcDone:
	default:
		t.Fatal("Close returned with the GC loop still running")
	}
	n := st.gcRuns.Load()
	time.Sleep(30 * time.Millisecond)
	if st.gcRuns.Load() != n {
		t.Fatal("GC loop ran after Close")
	}
}
