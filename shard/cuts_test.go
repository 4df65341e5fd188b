package shard

import (
	"fmt"
	"math/rand/v2"
	"slices"
	"testing"
	"time"

	"orbitwatch/delta"
	"orbitwatch/storage"
	"orbitwatch/stream"
)

// TestCutsFollowEventTime feeds a log with gaps, bursts, events out of
// order and events without a time, and holds the cuts to the rule: a cut
// before every event whose time reaches the next multiple of Every after
// the watermark, at the previous position, with nothing in between; one
// more after every multiple of Lines; and Cut at the end.
func TestCutsFollowEventTime(t *testing.T) {
	const every = 10 * time.Minute
	r := rand.New(rand.NewPCG(3, 3))
	var log []stream.Event
	clock := time.Duration(0)
	for i := range 400 {
		clock += time.Duration(r.IntN(240)) * time.Second
		e := ev(stream.OpAdd, fmt.Sprint("n", r.IntN(30)), fmt.Sprint("n", r.IntN(30)), clock-time.Duration(r.IntN(900))*time.Second)
		if i%37 == 0 {
			e.HasTS = false
		}
		log = append(log, e)
	}
	for _, lines := range []uint64{0, 50} {
		a := NewApplier(mustCounting(t, delta.Undirected, 4), 0, Cuts{Every: every, Lines: lines})
		var got []uint64
		a.OnCut = func(cp *storage.Checkpoint) error {
			if cp.Seq != a.Seq() {
				t.Fatalf("cut at %d handed over while the applier is at %d", cp.Seq, a.Seq())
			}
			got = append(got, cp.Seq)
			return nil
		}
		var want []uint64
		var wm time.Time
		for i, e := range log {
			seq := uint64(i + 1)
			if e.HasTS && !wm.IsZero() && !e.TS.Before(wm.Truncate(every).Add(every)) && (len(want) == 0 || want[len(want)-1] != seq-1) {
				want = append(want, seq-1)
			}
			if e.HasTS && e.TS.After(wm) {
				wm = e.TS
			}
			if err := a.Apply(seq, e); err != nil && !isReject(err) {
				t.Fatal(err)
			}
			if lines > 0 && seq%lines == 0 && (len(want) == 0 || want[len(want)-1] != seq) {
				want = append(want, seq)
			}
		}
		if err := a.Cut(); err != nil {
			t.Fatal(err)
		}
		if want[len(want)-1] != uint64(len(log)) {
			want = append(want, uint64(len(log)))
		}
		if !slices.Equal(got, want) {
			t.Fatalf("lines %d: cuts at %v,\nwant %v", lines, got, want)
		}
		t.Logf("lines %d: %d cuts over %d events", lines, len(got), len(log))
	}
}

// TestCheckpointsRebuildState stores every cut of a windowed stream with
// removes in a real store, and at every third cut restores an applier from
// the store and demands it equals the live one: the graph, the
// dictionary, the vectors (the counter restored from the stored records),
// the pending window and the state after both apply the rest of the log.
func TestCheckpointsRebuildState(t *testing.T) {
	const win = 3 * time.Hour
	for _, kind := range []delta.Kind{delta.Undirected, delta.Directed} {
		t.Run(kind.String(), func(t *testing.T) {
			c := mustCounting(t, kind, 3)
			if kind == delta.Undirected {
				c = mustCounting(t, kind, 4)
			}
			st, err := storage.Open(t.TempDir(), storage.Settings{Kind: kind, MaxNodes: c.Catalog.MaxNodes, NumOrbits: c.Catalog.NumOrbits(), Window: win})
			if err != nil {
				t.Fatal(err)
			}
			defer st.Close()
			r := rand.New(rand.NewPCG(9, uint64(kind)))
			var log []stream.Event
			clock := time.Duration(0)
			for range 900 {
				clock += time.Duration(r.IntN(120)) * time.Second
				op := stream.OpAdd
				if r.IntN(5) == 0 {
					op = stream.OpRemove
				}
				log = append(log, ev(op, fmt.Sprint("n", r.IntN(25)), fmt.Sprint("n", r.IntN(25)), clock))
			}
			live := NewApplier(c, win, Cuts{Every: 20 * time.Minute})
			cuts := 0
			live.OnCut = func(cp *storage.Checkpoint) error {
				if err := st.Commit(cp); err != nil {
					return err
				}
				cuts++
				if cuts%3 != 0 {
					return nil
				}
				restored, _, err := LoadApplier(c, win, Cuts{}, st)
				if err != nil {
					return err
				}
				if err := sameState(t, live, restored); err != nil {
					return fmt.Errorf("cut %d at seq %d: %w", cuts, cp.Seq, err)
				}
				if live.PendingExpiries() != restored.PendingExpiries() {
					return fmt.Errorf("cut %d: %d pending expiries live, %d restored", cuts, live.PendingExpiries(), restored.PendingExpiries())
				}
				// The restored applier goes on with the rest of the log and
				// must end where the live one ends.
				return goesOnLike(c, win, log, cp.Seq, restored, func(a, b *Applier) error { return sameState(t, a, b) })
			}
			for i, e := range log {
				if err := live.Apply(uint64(i+1), e); err != nil && !isReject(err) {
					t.Fatalf("event %d: %v", i+1, err)
				}
			}
			if cuts < 9 || live.Stats().Expired == 0 {
				t.Fatalf("%d cuts, %d expiries: the stream does not exercise the test", cuts, live.Stats().Expired)
			}
		})
	}
}
