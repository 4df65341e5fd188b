package shard

import (
	"fmt"
	"math/rand/v2"
	"testing"
	"time"

	"orbitwatch/delta"
	"orbitwatch/storage"
	"orbitwatch/stream"
)

// TestFollowTrailsByCuts: an applier that follows another cut by cut
// (Follow with each cut's net changes, as the alert stage's baseline state
// does) holds, after every cut, the same graph, multiplicities and orbit
// vectors as the live applier at that cut, for every kind and size the
// product counts; and one that follows the changes read back from the
// store (storage.ChangesBetween, as a restart and re-evaluation do) ends
// equal to it. The log has removes, a window's expiries, rejected events,
// repeated pairs and, for the signed kind, both signs and sign flips.
func TestFollowTrailsByCuts(t *testing.T) {
	const win = 2 * time.Hour
	cases := []struct {
		kind delta.Kind
		k    int
	}{{delta.Undirected, 3}, {delta.Undirected, 4}, {delta.Undirected, 5}, {delta.Directed, 3}, {delta.Directed, 4}, {delta.Signed, 3}, {delta.Signed, 4}}
	for _, tc := range cases {
		t.Run(fmt.Sprintf("%v-%d", tc.kind, tc.k), func(t *testing.T) {
			c := mustCounting(t, tc.kind, tc.k)
			st, err := storage.Open(t.TempDir(), storage.Settings{Kind: tc.kind, MaxNodes: tc.k, NumOrbits: c.Catalog.NumOrbits(), Window: win})
			if err != nil {
				t.Fatal(err)
			}
			defer st.Close()
			r := rand.New(rand.NewPCG(5, uint64(tc.k)))
			live := NewApplier(c, win, Cuts{Every: 15 * time.Minute})
			follower := NewApplier(c, 0, Cuts{})
			cuts := 0
			live.OnCut = func(cp *storage.Checkpoint) error {
				if err := st.Commit(cp); err != nil {
					return err
				}
				if err := follower.Follow(changesOf(cp, live.Dict().Len())); err != nil {
					return err
				}
				cuts++
				if err := sameSigned(t, live, follower); err != nil {
					return fmt.Errorf("cut %d (seq %d): %w", cuts, cp.Seq, err)
				}
				return nil
			}
			clock := time.Duration(0)
			for i := range 600 {
				clock += time.Duration(r.IntN(90)) * time.Second
				op := stream.OpAdd
				if r.IntN(4) == 0 {
					op = stream.OpRemove
				}
				e := ev(op, fmt.Sprint("n", r.IntN(16)), fmt.Sprint("n", r.IntN(16)), clock)
				e.Neg = tc.kind == delta.Signed && r.IntN(3) == 0
				if err := live.Apply(uint64(i+1), e); err != nil && !isReject(err) {
					t.Fatalf("event %d: %v", i+1, err)
				}
			}
			if err := live.Cut(); err != nil {
				t.Fatal(err)
			}
			if s := live.Stats(); cuts < 10 || s.Expired == 0 || len(s.Rejected) == 0 {
				t.Fatalf("%d cuts, %d expiries, rejected %v: the log does not exercise the test", cuts, s.Expired, s.Rejected)
			}
			stored, err := st.ChangesBetween(0, st.Seq())
			if err != nil {
				t.Fatal(err)
			}
			replayed := NewApplier(c, 0, Cuts{})
			for i := range stored {
				if err := replayed.Follow(&stored[i]); err != nil {
					t.Fatal(err)
				}
			}
			if err := sameSigned(t, live, replayed); err != nil {
				t.Fatalf("after following the stored changes: %v", err)
			}
		})
	}
}
