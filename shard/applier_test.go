package shard

import (
	"errors"
	"fmt"
	"math/rand/v2"
	"sort"
	"testing"
	"time"

	"orbitwatch/delta"
	"orbitwatch/stream"
)

func mustCounting(t testing.TB, kind delta.Kind, k int) *Counting {
	t.Helper()
	c, err := NewCounting(kind, k)
	if err != nil {
		t.Fatal(err)
	}
	return c
}

var t0 = time.Date(2026, 3, 1, 0, 0, 0, 0, time.UTC)

// mustVectors returns a's current vectors.
func mustVectors(t testing.TB, a *Applier) *delta.Vectors {
	t.Helper()
	v, err := a.Vectors()
	if err != nil {
		t.Fatal(err)
	}
	return v
}

func ev(op stream.Op, src, dst string, ts time.Duration) stream.Event {
	return stream.Event{Op: op, Src: src, Dst: dst, TS: t0.Add(ts), HasTS: true}
}

func TestApplierRejectsChangeNothing(t *testing.T) {
	for _, kind := range []delta.Kind{delta.Undirected, delta.Directed} {
		a := NewApplier(mustCounting(t, kind, 3), 0, Cuts{})
		steps := []struct {
			e    stream.Event
			want error
		}{
			{ev(stream.OpAdd, "a", "b", 0), nil},
			{ev(stream.OpAdd, "b", "c", 0), nil},
			{ev(stream.OpAdd, "c", "c", 0), delta.ErrSelfLoop},
			{ev(stream.OpRemove, "a", "c", 0), delta.ErrAbsent},
			{ev(stream.OpRemove, "a", "zz", 0), delta.ErrAbsent},
			{ev(stream.OpAdd, "a", "b", 0), nil},
			{ev(stream.OpRemove, "a", "b", 0), nil},
		}
		for i, s := range steps {
			before := mustVectors(t, a)
			nodes := len(a.Names())
			err := a.Apply(uint64(i+1), s.e)
			if s.want == nil {
				if err != nil {
					t.Fatalf("%v step %d: %v", kind, i, err)
				}
				continue
			}
			var rj *Reject
			if !errors.As(err, &rj) || !errors.Is(err, s.want) || rj.Seq != uint64(i+1) {
				t.Fatalf("%v step %d: got %v, want reject %v", kind, i, err, s.want)
			}
			if !mustVectors(t, a).Equal(before) || len(a.Names()) != nodes {
				t.Fatalf("%v step %d: a rejected event changed state", kind, i)
			}
		}
		// a-b still has multiplicity 1 after add, add, remove: the path a-b-c
		// remains, so b is the middle of a 3-path (orbit 2 undirected).
		if kind == delta.Undirected {
			b, _ := a.Lookup("b")
			if got := mustVectors(t, a).Get(b, 2); got != 1 {
				t.Fatalf("b middle of 3-path = %d, want 1", got)
			}
		}
		if st := a.Stats(); st.Applied != 4 || len(st.Rejected) != 2 {
			t.Fatalf("%v stats %+v", kind, st)
		}
	}
}

// TestWindowEqualsExplicitRemoves holds the windowed applier against an
// applier without a window fed the same log with every expiry written out
// as an explicit remove. The explicit log is built by a separate, quadratic
// simulation of the rule: an add at ts expires when the watermark reaches
// ts + W, expiries ordered by (expiry time, seq), and an explicit remove
// cancels the pair's earliest pending expiry.
func TestWindowEqualsExplicitRemoves(t *testing.T) {
	const W = 10 * time.Hour
	for _, kind := range []delta.Kind{delta.Undirected, delta.Directed} {
		for seed := uint64(1); seed <= 4; seed++ {
			t.Run(fmt.Sprintf("%v/%d", kind, seed), func(t *testing.T) {
				r := rand.New(rand.NewPCG(seed, 7))
				var log []stream.Event
				clock := time.Duration(0)
				for i := 0; i < 600; i++ {
					clock += time.Duration(r.IntN(90)) * time.Minute
					ts := clock - time.Duration(r.IntN(12*60))*time.Minute // some late, some out of order
					op := stream.OpAdd
					if r.IntN(6) == 0 {
						op = stream.OpRemove
					}
					u, v := r.IntN(14), r.IntN(14)
					log = append(log, ev(op, fmt.Sprint("n", u), fmt.Sprint("n", v), ts))
				}
				c := mustCounting(t, kind, 3)
				win := NewApplier(c, W, Cuts{})
				plain := NewApplier(mustCounting(t, kind, 3), 0, Cuts{})
				explicit, lateWant := explicitExpiries(log, W, kind)
				late := 0
				pi := 0
				seq := uint64(0)
				for i, e := range log {
					err := win.Apply(uint64(i+1), e)
					if errors.Is(err, ErrLate) {
						late++
					} else if err != nil && !isReject(err) {
						t.Fatal(err)
					}
					for ; pi < len(explicit) && explicit[pi].at <= i; pi++ {
						seq++
						if err := plain.Apply(seq, explicit[pi].e); err != nil && !isReject(err) {
							t.Fatal(err)
						}
					}
					if err := sameState(t, win, plain); err != nil {
						t.Fatalf("after log line %d: %v", i+1, err)
					}
				}
				if late != lateWant || late == 0 {
					t.Fatalf("late adds rejected %d, want %d (and some)", late, lateWant)
				}
				if win.Stats().Expired == 0 {
					t.Fatal("no expiry happened: the test stream is too short")
				}
			})
		}
	}
}

func isReject(err error) bool { var r *Reject; return errors.As(err, &r) }

// goesOnLike applies log after seq to restored, an applier restored at
// the cut seq, and the whole log to a fresh applier without cuts, and
// compares the two with same: a restored applier must end where an
// uninterrupted one ends. Rejected events are skipped alike.
func goesOnLike(c *Counting, win time.Duration, log []stream.Event, seq uint64, restored *Applier, same func(want, got *Applier) error) error {
	for i := seq; i < uint64(len(log)); i++ {
		if err := restored.Apply(i+1, log[i]); err != nil && !isReject(err) {
			return err
		}
	}
	end := NewApplier(c, win, Cuts{})
	for i, e := range log {
		if err := end.Apply(uint64(i+1), e); err != nil && !isReject(err) {
			return err
		}
	}
	return same(end, restored)
}

type placed struct {
	at int // index of the original log line after which this event applies
	e  stream.Event
}

// explicitExpiries writes the window out as explicit events, by brute force.
func explicitExpiries(log []stream.Event, w time.Duration, kind delta.Kind) ([]placed, int) {
	type pend struct {
		exp  time.Time
		seq  int
		u, v string
		dead bool
	}
	var pending []*pend
	var out []placed
	var wm time.Time
	late := 0
	key := func(u, v string) string {
		if kind == delta.Undirected && u > v {
			u, v = v, u
		}
		return u + "\x00" + v
	}
	mult := map[string]int{}
	for i, e := range log {
		if e.TS.After(wm) {
			wm = e.TS
			var due []*pend
			for _, p := range pending {
				if !p.dead && !p.exp.After(wm) {
					due = append(due, p)
				}
			}
			sort.Slice(due, func(a, b int) bool {
				if !due[a].exp.Equal(due[b].exp) {
					return due[a].exp.Before(due[b].exp)
				}
				return due[a].seq < due[b].seq
			})
			for _, p := range due {
				p.dead = true
				mult[key(p.u, p.v)]--
				out = append(out, placed{i, stream.Event{Op: stream.OpRemove, Src: p.u, Dst: p.v}})
			}
		}
		if e.Op == stream.OpAdd && !e.TS.Add(w).After(wm) {
			late++
			continue
		}
		if e.Src == e.Dst || (e.Op == stream.OpRemove && mult[key(e.Src, e.Dst)] == 0) {
			continue
		}
		k := key(e.Src, e.Dst)
		if e.Op == stream.OpAdd {
			mult[k]++
			pending = append(pending, &pend{exp: e.TS.Add(w), seq: i, u: e.Src, v: e.Dst})
			out = append(out, placed{i, stream.Event{Op: stream.OpAdd, Src: e.Src, Dst: e.Dst}})
			continue
		}
		mult[k]--
		var first *pend
		for _, p := range pending {
			if !p.dead && key(p.u, p.v) == k && (first == nil || p.exp.Before(first.exp) || (p.exp.Equal(first.exp) && p.seq < first.seq)) {
				first = p
			}
		}
		first.dead = true
		out = append(out, placed{i, stream.Event{Op: stream.OpRemove, Src: e.Src, Dst: e.Dst}})
	}
	return out, late
}

// sameState compares two appliers by node name: same edges with the same
// multiplicities and the same vectors.
func sameState(t testing.TB, a, b *Applier) error {
	va, vb := mustVectors(t, a), mustVectors(t, b)
	for x, name := range a.Names() {
		y, ok := b.Lookup(name)
		if !ok {
			return fmt.Errorf("node %q missing from the explicit replay", name)
		}
		ra, rb := va.Row(uint32(x)), vb.Row(y)
		for o := range ra {
			if ra[o] != rb[o] {
				return fmt.Errorf("node %q orbit %d: windowed %d, explicit %d", name, o, ra[o], rb[o])
			}
		}
	}
	if len(a.Names()) != len(b.Names()) || a.Graph().NumEdges() != b.Graph().NumEdges() {
		return fmt.Errorf("nodes %d/%d edges %d/%d", len(a.Names()), len(b.Names()), a.Graph().NumEdges(), b.Graph().NumEdges())
	}
	return nil
}
