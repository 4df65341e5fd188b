package shard

import (
	"cmp"
	"container/heap"
	"encoding/binary"
	"errors"
	"fmt"
	"slices"
	"time"

	"orbitwatch/storage"
)

// windowBlob is the storage blob that holds the pending expiries.
const windowBlob = "window"

// Restore returns an applier that continues from a stored checkpoint: its
// graph, vectors, dictionary, log position, watermark and pending window
// expiries. The state's vectors must have c's orbit count.
func Restore(c *Counting, win time.Duration, st *storage.State) (*Applier, error) {
	a := NewApplier(c, win)
	if st.Vectors.NumOrbits() != c.Catalog.NumOrbits() {
		return nil, fmt.Errorf("stored vectors have %d orbits, the counters %d", st.Vectors.NumOrbits(), c.Catalog.NumOrbits())
	}
	a.graph, a.vec, a.dict = st.Graph, st.Vectors, st.Dict
	a.graph.Grow(a.dict.Len())
	a.vec.Grow(a.dict.Len())
	a.touchMark = make([]uint32, a.dict.Len())
	a.seq, a.watermark = st.Seq, st.Watermark
	if b, ok := st.Blobs[windowBlob]; ok && len(b) > 0 {
		if a.window == nil {
			return nil, errors.New("stored state has pending window expiries but no window is set")
		}
		if err := a.window.decode(b); err != nil {
			return nil, fmt.Errorf("stored window expiries: %w", err)
		}
	}
	return a, nil
}

// Checkpoint returns the state change since the last ResetTouched, ready
// for storage.Store.Commit; blobs are the caller's records to store with it.
// After a successful commit the caller calls ResetTouched.
func (a *Applier) Checkpoint(blobs map[string][]byte) *storage.Checkpoint {
	b := make(map[string][]byte, len(blobs)+1)
	for k, v := range blobs {
		b[k] = v
	}
	if a.window != nil {
		b[windowBlob] = a.window.encode()
	}
	return &storage.Checkpoint{
		Seq:       a.seq,
		Watermark: a.watermark,
		Dict:      a.dict,
		Graph:     a.graph,
		Edges:     a.edges,
		Vectors:   a.vec,
		Nodes:     a.touched,
		Blobs:     b,
	}
}

// encode writes the pending expiries in (expiry, seq) order and the
// cancellations in key order, as varints, so equal states give equal bytes.
func (w *window) encode() []byte {
	q := slices.Clone(w.q)
	slices.SortFunc(q, func(x, y expiry) int {
		if x.at != y.at {
			return cmp.Compare(x.at, y.at)
		}
		return cmp.Compare(x.seq, y.seq)
	})
	buf := binary.AppendUvarint(nil, uint64(len(q)))
	for _, e := range q {
		buf = binary.AppendVarint(buf, e.at)
		buf = binary.AppendUvarint(buf, e.seq)
		buf = binary.AppendUvarint(buf, uint64(e.u))
		buf = binary.AppendUvarint(buf, uint64(e.v))
	}
	keys := make([]uint64, 0, len(w.cancelled))
	for k := range w.cancelled {
		keys = append(keys, k)
	}
	slices.Sort(keys)
	buf = binary.AppendUvarint(buf, uint64(len(keys)))
	for _, k := range keys {
		buf = binary.AppendUvarint(buf, k)
		buf = binary.AppendUvarint(buf, uint64(w.cancelled[k]))
	}
	return buf
}

func (w *window) decode(b []byte) error {
	r := varintReader{b: b}
	n := r.uvarint()
	w.q = make(expiryHeap, 0, min(n, uint64(len(b))))
	for i := uint64(0); i < n && r.err == nil; i++ {
		e := expiry{at: r.varint(), seq: r.uvarint(), u: uint32(r.uvarint()), v: uint32(r.uvarint())}
		w.q = append(w.q, e)
	}
	heap.Init(&w.q)
	m := r.uvarint()
	for i := uint64(0); i < m && r.err == nil; i++ {
		k := r.uvarint()
		w.cancelled[k] = uint32(r.uvarint())
	}
	if r.err == nil && len(r.b) != 0 {
		r.err = errors.New("trailing bytes")
	}
	return r.err
}

type varintReader struct {
	b   []byte
	err error
}

func (r *varintReader) uvarint() uint64 {
	if r.err != nil {
		return 0
	}
	x, n := binary.Uvarint(r.b)
	if n <= 0 {
		r.err = errors.New("truncated varint")
		return 0
	}
	r.b = r.b[n:]
	return x
}

func (r *varintReader) varint() int64 {
	if r.err != nil {
		return 0
	}
	x, n := binary.Varint(r.b)
	if n <= 0 {
		r.err = errors.New("truncated varint")
		return 0
	}
	r.b = r.b[n:]
	return x
}
