package shard

import (
	"slices"
	"testing"
)

// TestShuffleRoundTrip sums changes in an outbox, encodes each owner's
// message and decodes it: the per-(node, orbit) sums come back, zero sums
// are left out, and the outbox is empty for the next batch.
func TestShuffleRoundTrip(t *testing.T) {
	const orbits = 15
	b := newOutbox(2, orbits)
	owner := func(x uint32) int { return int(x % 2) }
	type key struct {
		x uint32
		o int
	}
	want := map[key]int64{}
	adds := []struct {
		x uint32
		o int
		d int64
	}{{3, 0, 2}, {3, 0, 5}, {4, 14, -1}, {9, 7, 1}, {9, 7, -1}, {0, 2, 1 << 40}, {1000, 3, -7}, {3, 1, 1}}
	for _, a := range adds {
		b.add(owner(a.x), a.x, a.o, a.d)
		want[key{a.x, a.o}] += a.d
	}
	for k, d := range want {
		if d == 0 {
			delete(want, k)
		}
	}
	got := map[key]int64{}
	for o := range 2 {
		parts := b.encode(1, o, 4096, 1001, 1<<20)
		if len(parts) != 1 {
			t.Fatalf("%d parts under a 1 MiB limit", len(parts))
		}
		msg, err := decodeShuffle(parts[0])
		if err != nil {
			t.Fatal(err)
		}
		if msg.origin != 1 || msg.owner != o || msg.batch != 4096 || msg.nodes != 1001 || msg.part != 0 || !msg.last {
			t.Fatalf("header %+v", msg)
		}
		if !slices.IsSortedFunc(msg.changes, func(a, b change) int {
			if a.node != b.node {
				return int(a.node) - int(b.node)
			}
			return a.orbit - b.orbit
		}) {
			t.Fatalf("changes not in (node, orbit) order: %+v", msg.changes)
		}
		for _, c := range msg.changes {
			if owner(c.node) != o {
				t.Fatalf("node %d in owner %d's message", c.node, o)
			}
			got[key{c.node, c.orbit}] = c.d
		}
	}
	b.done()
	if len(got) != len(want) {
		t.Fatalf("got %v, want %v", got, want)
	}
	for k, d := range want {
		if got[k] != d {
			t.Fatalf("(%d,%d) = %d, want %d", k.x, k.o, got[k], d)
		}
	}
	for o := range 2 {
		msg, _ := decodeShuffle(b.encode(1, o, 8192, 1001, 1<<20)[0])
		if len(msg.changes) != 0 {
			t.Fatalf("outbox not empty after a batch: %+v", msg.changes)
		}
	}
	b.done()
	if n := testing.AllocsPerRun(100, func() { b.add(1, 3, 4, 1); b.add(1, 3, 4, -1) }); n != 0 {
		t.Fatalf("outbox.add allocates %v per call", n)
	}
}

func TestDecodeShuffleRejectsBadMessages(t *testing.T) {
	good := newOutbox(1, 15)
	good.add(0, 2, 3, 4)
	msg := good.encode(0, 0, 10, 3, 1<<20)[0]
	for _, c := range []struct {
		name string
		b    []byte
	}{
		{"empty", nil},
		{"other version", append([]byte{2}, msg[1:]...)},
		{"truncated", msg[:len(msg)-1]},
		{"trailing byte", append(slices.Clone(msg), 0)},
		{"count beyond the bytes", []byte{1, 0, 0, 10, 3, 0, 1, 100}},
		{"zero change", []byte{1, 0, 0, 10, 3, 0, 1, 1, 2, 3, 0}},
		{"bad last flag", []byte{1, 0, 0, 10, 3, 0, 2, 0}},
	} {
		if _, err := decodeShuffle(c.b); err == nil {
			t.Errorf("%s: decoded", c.name)
		}
	}
}

// TestShuffleParts: a message over the limit is cut into parts, numbered
// from 0 with the last marked, that together carry every change once.
func TestShuffleParts(t *testing.T) {
	b := newOutbox(1, 15)
	want := 0
	for x := uint32(0); x < 300; x++ {
		for o := 0; o < 15; o += 2 {
			b.add(0, x, o, int64(x)+1)
			want++
		}
	}
	parts := b.encode(0, 0, 77, 300, 100)
	if len(parts) < 10 {
		t.Fatalf("%d parts for %d changes under a 100-byte limit", len(parts), want)
	}
	got := 0
	for i, p := range parts {
		m, err := decodeShuffle(p)
		if err != nil {
			t.Fatal(err)
		}
		if m.part != i || m.last != (i == len(parts)-1) || m.batch != 77 {
			t.Fatalf("part %d: %+v", i, m)
		}
		for _, c := range m.changes {
			if c.d != int64(c.node)+1 || c.orbit%2 != 0 {
				t.Fatalf("part %d: change %+v", i, c)
			}
		}
		got += len(m.changes)
	}
	if got != want {
		t.Fatalf("parts carry %d changes, want %d", got, want)
	}
}
