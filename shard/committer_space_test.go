package shard

import (
	"context"
	"errors"
	"fmt"
	"path/filepath"
	"sync"
	"testing"
	"time"

	"orbitwatch/delta"
	"orbitwatch/internal/tmpfs"
	"orbitwatch/storage"
)

// spaceCut is cut i of a test log: 200 new names, each with a record.
func spaceCut(i int) *storage.Checkpoint {
	t0 := time.Date(2026, 3, 1, 0, 0, 0, 0, time.UTC)
	cp := &storage.Checkpoint{Seq: uint64(i) * 100, Watermark: t0.Add(time.Duration(i) * time.Minute), Blobs: map[string][]byte{}}
	for k := range 200 {
		x := uint32((i-1)*200 + k)
		cp.Names = append(cp.Names, fmt.Sprintf("acct-%06d", x))
		cp.Records = append(cp.Records, storage.RecordChange{Node: x, Data: []byte{byte(i), byte(k), 1, 2, 3}})
	}
	return cp
}

// fullStore opens a store in a 96 MiB tmpfs and returns it with the
// tmpfs's directory.
func fullStore(t *testing.T) (*storage.Store, string, string) {
	t.Helper()
	fs := filepath.Join(t.TempDir(), "fs")
	tmpfs.Mount(t, fs, 96<<20)
	dir := filepath.Join(fs, "store")
	st, err := storage.Open(dir, storage.Settings{Kind: delta.Undirected, MaxNodes: 3, NumOrbits: 4})
	if err != nil {
		t.Fatal(err)
	}
	return st, fs, dir
}

// TestCommitterWaitsOutAFullDisk: with OnStall set, a commit the store
// refuses for want of space is tried again, with growing pauses, each
// refusal told and counted, while the queue fills and WaitRoom waits; once
// space is freed every cut becomes durable, in order, and the stall ends.
func TestCommitterWaitsOutAFullDisk(t *testing.T) {
	st, fs, dir := fullStore(t)
	defer st.Close()
	c := NewCommitter(st, 3)
	var mu sync.Mutex
	var tries []int
	var pauses []time.Duration
	c.OnStall = func(err error, try int, pause time.Duration) {
		if !errors.Is(err, storage.ErrNoSpace) {
			t.Errorf("stalled on %v", err)
		}
		mu.Lock()
		tries, pauses = append(tries, try), append(pauses, pause)
		mu.Unlock()
	}
	release := tmpfs.Fill(t, fs, int64(storage.Room(dir, 0))-(1<<20))
	if err := c.Put(spaceCut(1)); err != nil {
		t.Fatal(err)
	}
	deadline := time.Now().Add(20 * time.Second)
	for {
		if n, err := c.Stalled(); n >= 3 && err != nil {
			break
		}
		if time.Now().After(deadline) {
			t.Fatal("the committer did not try the refused commit again three times")
		}
		time.Sleep(20 * time.Millisecond)
	}
	for i := 2; i <= 4; i++ {
		if err := c.Put(spaceCut(i)); err != nil {
			t.Fatal(err)
		}
	}
	// The queue is full: WaitRoom waits until its context ends.
	ctx, cancel := context.WithTimeout(context.Background(), 300*time.Millisecond)
	c.WaitRoom(ctx)
	cancel()
	if ctx.Err() == nil {
		t.Fatal("WaitRoom returned with the queue full and commits refused")
	}
	if st.Seq() != 0 || c.Committed() != 0 {
		t.Fatalf("store at %d, committer at %d while every commit was refused", st.Seq(), c.Committed())
	}
	release()
	if err := c.Wait(400); err != nil {
		t.Fatal(err)
	}
	if err := c.Close(); err != nil {
		t.Fatal(err)
	}
	retries, err := c.Stalled()
	if err != nil || st.Seq() != 400 || len(st.Checkpoints()) != 4 {
		t.Fatalf("after space returned: stall %v, store at %d with %d cuts, want 400 and 4", err, st.Seq(), len(st.Checkpoints()))
	}
	mu.Lock()
	defer mu.Unlock()
	if uint64(len(tries)) != retries || retries < 3 {
		t.Fatalf("%d refusals told, %d counted", len(tries), retries)
	}
	for i := range tries {
		if tries[i] != i+1 || pauses[i] != min(stallPauseMin<<i, stallPauseMax) {
			t.Fatalf("refusal %d: try %d, pause %v", i, tries[i], pauses[i])
		}
	}
}

// TestCommitterStoppedWhileStalled: Close during a stall gives up after
// one more try and returns the refusal; nothing of the refused cuts is in
// the store. Without OnStall the first refusal fails the committer (a
// backfill stops and says so).
func TestCommitterStoppedWhileStalled(t *testing.T) {
	for _, wait := range []bool{true, false} {
		st, fs, dir := fullStore(t)
		if err := st.Commit(spaceCut(1)); err != nil {
			t.Fatal(err)
		}
		c := NewCommitter(st, 3)
		stalled := make(chan struct{}, 100)
		if wait {
			c.OnStall = func(error, int, time.Duration) { stalled <- struct{}{} }
		}
		release := tmpfs.Fill(t, fs, int64(storage.Room(dir, 0))-(1<<20))
		if err := c.Put(spaceCut(2)); err != nil {
			t.Fatal(err)
		}
		if wait {
			<-stalled
		} else {
			c.Wait(200)
			if err := c.Put(spaceCut(3)); !errors.Is(err, storage.ErrNoSpace) {
				t.Fatalf("Put after a refused commit without OnStall: %v", err)
			}
		}
		err := c.Close()
		var se *storage.SpaceError
		if !errors.As(err, &se) || se.Seq != 100 {
			t.Fatalf("wait %v: Close of a stalled committer: %v", wait, err)
		}
		if st.Seq() != 100 {
			t.Fatalf("wait %v: store at %d, want 100", wait, st.Seq())
		}
		release()
		st.Close()
	}
}
