package shard

import (
	"container/heap"
	"time"

	"orbitwatch/delta"
)

// window keeps the pending expiry of every accepted add, ordered by
// (expiry time, seq) so that every replica expires edges at the same log
// position and in the same order.
type window struct {
	width     time.Duration
	kind      delta.Kind
	q         expiryHeap
	cancelled map[uint64]uint32 // pair key → expiries to skip (explicit removes)
}

type expiry struct {
	at   int64 // unix nanoseconds
	seq  uint64
	u, v uint32
}

func newWindow(w time.Duration, kind delta.Kind) *window {
	return &window{width: w, kind: kind, cancelled: make(map[uint64]uint32)}
}

func (w *window) push(at time.Time, seq uint64, u, v uint32) {
	heap.Push(&w.q, expiry{at: at.UnixNano(), seq: seq, u: u, v: v})
}

// pop returns the next expiry due at watermark wm (expiry time ≤ wm), skipping
// those cancelled by explicit removes.
func (w *window) pop(wm time.Time) (expiry, bool) {
	for len(w.q) > 0 && w.q[0].at <= wm.UnixNano() {
		e := heap.Pop(&w.q).(expiry)
		k := pairKey(e.u, e.v, w.kind)
		if n := w.cancelled[k]; n > 0 {
			if n == 1 {
				delete(w.cancelled, k)
			} else {
				w.cancelled[k] = n - 1
			}
			continue
		}
		return e, true
	}
	return expiry{}, false
}

// cancel records that an explicit remove of (u, v) took away one pending add:
// the earliest pending expiry of that pair will be skipped.
func (w *window) cancel(u, v uint32) {
	w.cancelled[pairKey(u, v, w.kind)]++
}

func pairKey(u, v uint32, kind delta.Kind) uint64 {
	if kind == delta.Undirected && u > v {
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
