package storage

import (
	"encoding/binary"
	"errors"
	"fmt"
	"time"

	badger "github.com/dgraph-io/badger/v4"

	"orbitwatch/delta"
)

// Checkpoint is the state change one Commit makes durable.
type Checkpoint struct {
	// Seq is the sequence the state is complete at; it must exceed the
	// store's last complete checkpoint.
	Seq uint64
	// Watermark is the event-time watermark at Seq; it must not be earlier
	// than the previous checkpoint's.
	Watermark time.Time
	// Dict is the dictionary loaded from this store (or NewDict for an empty
	// store) with the ids interned since; its new entries are written.
	Dict *Dict
	// Graph is the current adjacency; Edges lists the pairs (u,v) whose
	// multiplicity changed since the last checkpoint (either order for
	// undirected graphs; repeats are harmless). Their multiplicity is read
	// from Graph; 0 deletes the edge.
	Graph *delta.Graph
	Edges [][2]uint32
	// Vectors holds every node's orbit vector; Nodes lists the nodes whose
	// vector changed (repeats are harmless).
	Vectors *delta.Vectors
	Nodes   []uint32
	// Blobs are opaque applier records (input progress, pending expiries).
	// A blob keeps its last written value until rewritten; a nil value
	// deletes it.
	Blobs map[string][]byte
}

// Commit writes cp as the checkpoint at version cp.Seq. Records go through
// a managed write batch (several Badger transactions for a big checkpoint)
// at version cp.Seq; after they are synced, one last transaction at the same
// version writes the meta record that makes the checkpoint complete. Until
// then readers and recovery see the previous checkpoint.
//
// Bad arguments from the caller's data (sequence not increasing, watermark
// going back or out of range, a dictionary that does not continue the
// stored one) are errors and write nothing. Mismatched kinds, orbit counts
// or node numbers are programmer errors and panic. After a failure half-way
// through, the store refuses further commits until it is reopened (which
// repairs it).
func (st *Store) Commit(cp *Checkpoint) error {
	if st.readOnly {
		return fmt.Errorf("storage: commit %d: store opened read-only", cp.Seq)
	}
	st.mu.RLock()
	complete, dictLen, failed := st.complete, st.dictLen, st.failed
	var lastWM time.Time
	if n := len(st.cps); n > 0 {
		lastWM = st.cps[n-1].Watermark
	}
	st.mu.RUnlock()
	if failed != nil {
		return fmt.Errorf("storage: commit %d: an earlier commit failed half-way; reopen the store: %w", cp.Seq, failed)
	}
	if cp.Seq <= complete {
		return fmt.Errorf("storage: commit %d: sequence does not exceed the last checkpoint %d", cp.Seq, complete)
	}
	if cp.Watermark.Before(lastWM) {
		return fmt.Errorf("storage: commit %d: watermark %v is before the previous checkpoint's %v", cp.Seq, cp.Watermark, lastWM)
	}
	wm, err := watermarkBits(cp.Watermark)
	if err != nil {
		return fmt.Errorf("storage: commit %d: %w", cp.Seq, err)
	}
	st.checkShapes(cp)
	if cp.Dict.written != dictLen {
		return fmt.Errorf("storage: commit %d: dictionary has %d stored entries, the store %d (not the dictionary loaded from this store)", cp.Seq, cp.Dict.written, dictLen)
	}
	if err := st.writeRecords(cp); err != nil {
		st.fail(err)
		return fmt.Errorf("storage: commit %d: %w", cp.Seq, err)
	}
	if err := st.writeMeta(cp.Seq, wm, cp.Dict.Len()); err != nil {
		st.fail(err)
		return fmt.Errorf("storage: commit %d: %w", cp.Seq, err)
	}
	cp.Dict.written = cp.Dict.Len()
	st.mu.Lock()
	st.complete, st.dictLen = cp.Seq, cp.Dict.Len()
	st.cps = append(st.cps, CheckpointInfo{Seq: cp.Seq, Watermark: watermarkTime(wm), Nodes: cp.Dict.Len()})
	for k, vs := range st.torn {
		if vs[0] <= cp.Seq { // versions are listed newest first
			delete(st.torn, k)
			continue
		}
		for i, v := range vs {
			if v <= cp.Seq {
				st.torn[k] = vs[:i]
				break
			}
		}
	}
	st.mu.Unlock()
	return nil
}

func (st *Store) fail(err error) {
	st.mu.Lock()
	st.failed = err
	st.mu.Unlock()
}

// checkShapes panics when cp does not fit the store's settings.
func (st *Store) checkShapes(cp *Checkpoint) {
	if cp.Dict == nil || cp.Graph == nil || cp.Vectors == nil {
		panic("storage: checkpoint without dictionary, graph or vectors")
	}
	n := cp.Dict.Len()
	if cp.Graph.Kind() != st.settings.Kind {
		panic("storage: checkpoint graph kind differs from the store's")
	}
	if cp.Graph.NumNodes() > n {
		panic("storage: checkpoint graph has nodes missing from the dictionary")
	}
	if cp.Vectors.NumOrbits() != st.settings.NumOrbits {
		panic("storage: checkpoint vectors have another orbit count than the store's")
	}
	for _, e := range cp.Edges {
		if int(e[0]) >= n || int(e[1]) >= n || e[0] == e[1] {
			panic("storage: checkpoint edge with an unknown node or a self-loop")
		}
	}
	for _, x := range cp.Nodes {
		if int(x) >= n || int(x) >= cp.Vectors.NumNodes() {
			panic("storage: checkpoint node missing from the dictionary or the vectors")
		}
	}
}

// batchWriter puts records at one version, writing through to the
// versions a torn checkpoint left above it (see repair). Keys and values
// are carved from large chunks because Badger keeps the slices until the
// batch is flushed.
type batchWriter struct {
	wb    *badger.WriteBatch
	seq   uint64
	torn  map[string][]uint64
	chunk []byte
}

func (w *batchWriter) alloc(n int) []byte {
	if cap(w.chunk)-len(w.chunk) < n {
		w.chunk = make([]byte, 0, max(1<<20, n))
	}
	i := len(w.chunk)
	w.chunk = w.chunk[:i+n]
	return w.chunk[i : i+n : i+n]
}

// put writes key → val (del: a delete) at w.seq and at every torn version
// of the key above it. key and val are copied.
func (w *batchWriter) put(key, val []byte, del bool) error {
	k := w.alloc(len(key))
	copy(k, key)
	var v []byte
	if !del {
		v = w.alloc(len(val))
		copy(v, val)
	}
	if err := w.at(k, v, del, w.seq); err != nil {
		return err
	}
	for _, ts := range w.torn[string(k)] {
		if ts <= w.seq {
			break
		}
		if err := w.at(k, v, del, ts); err != nil {
			return err
		}
	}
	return nil
}

func (w *batchWriter) at(k, v []byte, del bool, ts uint64) error {
	if del {
		return w.wb.DeleteAt(k, ts)
	}
	return w.wb.SetEntryAt(badger.NewEntry(k, v), ts)
}

func (st *Store) writeRecords(cp *Checkpoint) error {
	wb := st.db.NewManagedWriteBatch()
	defer wb.Cancel()
	w := &batchWriter{wb: wb, seq: cp.Seq, torn: st.torn}
	var key, val []byte
	for i := cp.Dict.written; i < cp.Dict.Len(); i++ {
		name := cp.Dict.names[i]
		key = binary.BigEndian.AppendUint32(append(key[:0], pDictID), uint32(i))
		if err := w.put(key, []byte(name), false); err != nil {
			return err
		}
		key = append(append(key[:0], pDictName), name...)
		val = binary.BigEndian.AppendUint32(val[:0], uint32(i))
		if err := w.put(key, val, false); err != nil {
			return err
		}
	}
	undirected := cp.Graph.Kind() == delta.Undirected
	for _, e := range cp.Edges {
		u, v := e[0], e[1]
		if undirected && u > v {
			u, v = v, u
		}
		m := cp.Graph.Multiplicity(u, v)
		key = appendEdgeKey(key[:0], u, v)
		val = binary.AppendUvarint(val[:0], uint64(m))
		if err := w.put(key, val, m == 0); err != nil {
			return err
		}
	}
	for _, x := range cp.Nodes {
		key = binary.BigEndian.AppendUint32(append(key[:0], pVector), x)
		val = appendVector(val[:0], cp.Vectors.Row(x))
		if err := w.put(key, val, false); err != nil {
			return err
		}
	}
	for name, b := range cp.Blobs {
		key = append(append(key[:0], pBlob), name...)
		if err := w.put(key, b, b == nil); err != nil {
			return err
		}
	}
	if err := wb.Flush(); err != nil {
		return err
	}
	return st.db.Sync()
}

// writeMeta commits, in one transaction at version seq, the meta record
// (dictionary size), the checkpoint record (watermark, dictionary size)
// and its watermark index entry.
func (st *Store) writeMeta(seq, wm uint64, dictLen int) error {
	txn := st.db.NewTransactionAt(seq, true)
	defer txn.Discard()
	var wmb [8]byte
	binary.BigEndian.PutUint64(wmb[:], wm)
	idx := append(append([]byte{pWatermark}, wmb[:]...), keySeq(0, seq)[1:]...)
	err := errors.Join(
		txn.Set([]byte{pMeta}, binary.AppendUvarint(nil, uint64(dictLen))),
		txn.Set(keySeq(pCheckpoint, seq), binary.AppendUvarint(wmb[:], uint64(dictLen))),
		txn.Set(idx, []byte{}),
	)
	if err != nil {
		return err
	}
	if err := txn.CommitAt(seq, nil); err != nil {
		return err
	}
	return st.db.Sync()
}
