package shard

import (
	"errors"
	"fmt"
	"math/rand/v2"
	"testing"
	"time"

	"orbitwatch/delta"
	"orbitwatch/delta/brute"
	"orbitwatch/storage"
	"orbitwatch/stream"
)

func signedEv(op stream.Op, src, dst string, neg bool, ts time.Duration) stream.Event {
	e := ev(op, src, dst, ts)
	e.Neg = neg
	return e
}

// checkSigned demands a's vectors equal the brute-force count of its
// graph.
func checkSigned(t *testing.T, a *Applier, what string) {
	t.Helper()
	want := brute.Count(a.Graph(), a.Counting().Catalog)
	if x, o, got, w, ok := mustVectors(t, a).FirstDiff(want); !ok {
		t.Fatalf("%s: node %q orbit %d (%s): applier %d, brute %d", what, a.Names()[x], o, a.Counting().Catalog.Orbits[o].Name, got, w)
	}
}

// TestSignedWindowExpiresEachSign walks one pair through adds and removes
// of both signs under a 10-minute window: a remove of a sign at zero is
// rejected while the other sign keeps the pair, an explicit remove
// cancels the earliest pending expiry of its own sign, and each expiry
// takes away the sign its add had (the pair turns from negative to
// positive, then vanishes).
func TestSignedWindowExpiresEachSign(t *testing.T) {
	for _, k := range []int{3, 4} {
		a := NewApplier(mustCounting(t, delta.Signed, k), 10*time.Minute, Cuts{})
		seq := uint64(0)
		step := func(e stream.Event, want error, p, n uint32, what string) {
			t.Helper()
			seq++
			err := a.Apply(seq, e)
			if want == nil && err != nil || want != nil && (!isReject(err) || !errors.Is(err, want)) {
				t.Fatalf("k=%d %s: %v, want %v", k, what, err, want)
			}
			x, _ := a.Lookup("a")
			y, _ := a.Lookup("b")
			if gp, gn := a.Graph().Multiplicities(x, y); gp != p || gn != n {
				t.Fatalf("k=%d %s: a-b multiplicities %d, %d, want %d, %d", k, what, gp, gn, p, n)
			}
			checkSigned(t, a, fmt.Sprintf("k=%d %s", k, what))
		}
		step(signedEv(stream.OpAdd, "a", "b", false, 0), nil, 1, 0, "payment a-b")
		step(signedEv(stream.OpAdd, "b", "a", true, time.Minute), nil, 1, 1, "dispute a-b (turns negative)")
		step(signedEv(stream.OpAdd, "b", "c", false, 2*time.Minute), nil, 1, 1, "payment b-c")
		step(signedEv(stream.OpAdd, "a", "c", true, 2*time.Minute), nil, 1, 1, "dispute a-c")
		step(signedEv(stream.OpRemove, "a", "b", true, 3*time.Minute), nil, 1, 0, "dispute a-b withdrawn (positive again)")
		step(signedEv(stream.OpRemove, "a", "b", true, 4*time.Minute), delta.ErrAbsent, 1, 0, "second withdrawal rejected")
		step(signedEv(stream.OpAdd, "a", "b", true, 5*time.Minute), nil, 1, 1, "new dispute a-b")
		// The payment's add at 0 expires at 10m; the withdrawn dispute's
		// expiry at 11m is cancelled; the new dispute stays until 15m.
		step(signedEv(stream.OpAdd, "d", "e", false, 10*time.Minute), nil, 0, 1, "payment expired, dispute stays")
		step(signedEv(stream.OpAdd, "d", "e", false, 11*time.Minute+time.Second), nil, 0, 1, "withdrawn dispute's expiry skipped")
		step(signedEv(stream.OpAdd, "d", "e", false, 15*time.Minute), nil, 0, 0, "dispute expired")
		if s := a.Stats(); s.Expired != 4 {
			t.Fatalf("k=%d: %d expiries, want 4 (a-b +, b-c, a-c, a-b −)", k, s.Expired)
		}
	}
}

// TestSignedCheckpointsRebuildState replays a windowed signed stream (sign
// flips, both signs on a pair, removes of either sign, many of them
// rejected) into a real store, and at every third cut restores an
// applier from the store and demands the same vectors and the same signed
// multiplicities on every pair; the restored applier then applies the
// rest of the log and must end where a fresh replay ends. Every cut's
// vectors equal the brute-force count.
func TestSignedCheckpointsRebuildState(t *testing.T) {
	const win = 3 * time.Hour
	for _, k := range []int{3, 4} {
		t.Run(fmt.Sprint("k=", k), func(t *testing.T) {
			c := mustCounting(t, delta.Signed, k)
			st, err := storage.Open(t.TempDir(), storage.Settings{Kind: delta.Signed, MaxNodes: k, NumOrbits: c.Catalog.NumOrbits(), Window: win})
			if err != nil {
				t.Fatal(err)
			}
			defer st.Close()
			r := rand.New(rand.NewPCG(21, uint64(k)))
			var log []stream.Event
			clock := time.Duration(0)
			for range 700 {
				clock += time.Duration(r.IntN(120)) * time.Second
				op := stream.OpAdd
				if r.IntN(4) == 0 {
					op = stream.OpRemove
				}
				log = append(log, signedEv(op, fmt.Sprint("n", r.IntN(18)), fmt.Sprint("n", r.IntN(18)), r.IntN(3) == 0, clock))
			}
			live := NewApplier(c, win, Cuts{Every: 20 * time.Minute})
			cuts := 0
			live.OnCut = func(cp *storage.Checkpoint) error {
				if err := st.Commit(cp); err != nil {
					return err
				}
				checkSigned(t, live, fmt.Sprintf("cut at %d", cp.Seq))
				cuts++
				if cuts%3 != 0 {
					return nil
				}
				restored, _, err := LoadApplier(c, win, Cuts{}, st)
				if err != nil {
					return err
				}
				if err := sameSigned(t, live, restored); err != nil {
					return fmt.Errorf("cut %d at seq %d: %w", cuts, cp.Seq, err)
				}
				return goesOnLike(c, win, log, cp.Seq, restored, func(a, b *Applier) error { return sameSigned(t, a, b) })
			}
			for i, e := range log {
				if err := live.Apply(uint64(i+1), e); err != nil && !isReject(err) {
					t.Fatalf("event %d: %v", i+1, err)
				}
			}
			s := live.Stats()
			if cuts < 9 || s.Expired == 0 || s.Rejected[delta.ErrAbsent.Error()] == 0 {
				t.Fatalf("%d cuts, %d expiries, %v rejected: the stream does not exercise the test", cuts, s.Expired, s.Rejected)
			}
			t.Logf("%d events, %d cuts, %d expired, rejected %v", len(log), cuts, s.Expired, s.Rejected)
		})
	}
}

// sameSigned is sameState plus the signed multiplicities of every pair.
func sameSigned(t testing.TB, a, b *Applier) error {
	if err := sameState(t, a, b); err != nil {
		return err
	}
	var err error
	a.Graph().ForEachEdge(func(u, v uint32, _ uint32) {
		x, _ := b.Lookup(a.Names()[u])
		y, _ := b.Lookup(a.Names()[v])
		pa, na := a.Graph().Multiplicities(u, v)
		pb, nb := b.Graph().Multiplicities(x, y)
		if (pa != pb || na != nb) && err == nil {
			err = fmt.Errorf("pair %s-%s: multiplicities %d, %d and %d, %d", a.Names()[u], a.Names()[v], pa, na, pb, nb)
		}
	})
	return err
}
