package shard

import (
	"container/heap"
	"encoding/binary"
	"fmt"
	"time"

	"orbitwatch/delta"
	"orbitwatch/storage"
)

// window keeps the pending expiry of every accepted add, ordered by
// (expiry time, seq) so that every replica expires edges at the same log
// position and in the same order. An explicit remove cancels the pair's
// earliest pending expiry (in a Signed graph, of the sign it removes: an
// expiry remembers its add's sign and expires that sign). Its state is
// stored one key per pending expiry and per cancelled pair
// (storage.KeyedChange), and changes records what moved since the last
// cut.
type window struct {
	width     time.Duration
	kind      delta.Kind
	q         expiryHeap
	cancelled [2]map[uint64]uint32 // by sign (1: negative): pair key → expiries to skip (explicit removes)
	changes   []storage.KeyedChange
}

type expiry struct {
	at   int64 // unix nanoseconds
	seq  uint64
	u, v uint32
	neg  bool
}

func newWindow(w time.Duration, kind delta.Kind) *window {
	return &window{width: w, kind: kind, cancelled: [2]map[uint64]uint32{make(map[uint64]uint32), make(map[uint64]uint32)}}
}

// Keys: "e" at(8, sign flipped) seq(8) → uvarint u, v, and a uvarint 1
// for a negative add; "c" pair(8) → uvarint count, "n" pair(8) for the
// cancelled negative adds.
func expiryKey(e expiry) string {
	b := make([]byte, 0, 17)
	b = append(b, 'e')
	b = binary.BigEndian.AppendUint64(b, uint64(e.at)^(1<<63))
	return string(binary.BigEndian.AppendUint64(b, e.seq))
}

func cancelKey(k uint64, neg bool) string {
	p := byte('c')
	if neg {
		p = 'n'
	}
	return string(binary.BigEndian.AppendUint64([]byte{p}, k))
}

func signIndex(neg bool) int {
	if neg {
		return 1
	}
	return 0
}

func (w *window) push(at time.Time, seq uint64, u, v uint32, neg bool) {
	e := expiry{at: at.UnixNano(), seq: seq, u: u, v: v, neg: neg}
	heap.Push(&w.q, e)
	val := binary.AppendUvarint(binary.AppendUvarint(nil, uint64(u)), uint64(v))
	if neg {
		val = binary.AppendUvarint(val, 1)
	}
	w.changes = append(w.changes, storage.KeyedChange{Key: expiryKey(e), Value: val})
}

// pop returns the next expiry due at watermark wm (expiry time ≤ wm),
// skipping those cancelled by explicit removes.
func (w *window) pop(wm time.Time) (expiry, bool) {
	for len(w.q) > 0 && w.q[0].at <= wm.UnixNano() {
		e := heap.Pop(&w.q).(expiry)
		w.changes = append(w.changes, storage.KeyedChange{Key: expiryKey(e)})
		k := pairKey(e.u, e.v, w.kind)
		if n := w.cancelled[signIndex(e.neg)][k]; n > 0 {
			w.setCancelled(k, e.neg, n-1)
			continue
		}
		return e, true
	}
	return expiry{}, false
}

// cancel records that an explicit remove of (u, v), of the sign neg in a
// Signed graph, took away one pending add: the earliest pending expiry of
// that pair and sign will be skipped.
func (w *window) cancel(u, v uint32, neg bool) {
	k := pairKey(u, v, w.kind)
	w.setCancelled(k, neg, w.cancelled[signIndex(neg)][k]+1)
}

func (w *window) setCancelled(k uint64, neg bool, n uint32) {
	ch := storage.KeyedChange{Key: cancelKey(k, neg)}
	m := w.cancelled[signIndex(neg)]
	if n == 0 {
		delete(m, k)
	} else {
		m[k] = n
		ch.Value = binary.AppendUvarint(nil, uint64(n))
	}
	w.changes = append(w.changes, ch)
}

// takeChanges returns the keyed changes since the last call.
func (w *window) takeChanges() []storage.KeyedChange {
	ch := w.changes
	w.changes = nil
	return ch
}

// load rebuilds the window from its stored keys.
func (w *window) load(keyed []storage.KeyedChange) error {
	for _, k := range keyed {
		b := []byte(k.Key)
		switch {
		case len(b) == 17 && b[0] == 'e':
			vals, ok := uvarints(k.Value)
			if !ok || !(len(vals) == 2 || len(vals) == 3 && vals[2] == 1) {
				return fmt.Errorf("pending expiry %x: bad value", b)
			}
			w.q = append(w.q, expiry{at: int64(binary.BigEndian.Uint64(b[1:]) ^ (1 << 63)), seq: binary.BigEndian.Uint64(b[9:]), u: uint32(vals[0]), v: uint32(vals[1]), neg: len(vals) == 3})
		case len(b) == 9 && (b[0] == 'c' || b[0] == 'n'):
			n, m := binary.Uvarint(k.Value)
			if m <= 0 || m != len(k.Value) || n == 0 {
				return fmt.Errorf("cancelled expiries %x: bad value", b)
			}
			w.cancelled[signIndex(b[0] == 'n')][binary.BigEndian.Uint64(b[1:])] = uint32(n)
		default:
			return fmt.Errorf("unknown window key %x", b)
		}
	}
	heap.Init(&w.q)
	return nil
}

// uvarints decodes b as up to three uvarints; ok is false when b holds
// more or does not decode to its end.
func uvarints(b []byte) (vals []uint64, ok bool) {
	for len(b) > 0 {
		x, n := binary.Uvarint(b)
		if n <= 0 || len(vals) == 3 {
			return nil, false
		}
		vals, b = append(vals, x), b[n:]
	}
	return vals, true
}

// pending returns the number of pending expiries.
func (w *window) pending() int { return len(w.q) }

func pairKey(u, v uint32, kind delta.Kind) uint64 {
	if kind != delta.Directed && u > v {
		u, v = v, u
	}
	return uint64(u)<<32 | uint64(v)
}

type expiryHeap []expiry

func (h expiryHeap) Len() int { return len(h) }
func (h expiryHeap) Less(i, j int) bool {
	if h[i].at != h[j].at {
		return h[i].at < h[j].at
	}
	return h[i].seq < h[j].seq
}
func (h expiryHeap) Swap(i, j int) { h[i], h[j] = h[j], h[i] }
func (h *expiryHeap) Push(x any)   { *h = append(*h, x.(expiry)) }
func (h *expiryHeap) Pop() any {
	old := *h
	e := old[len(old)-1]
	*h = old[:len(old)-1]
	return e
}
