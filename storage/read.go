package storage

import (
	"encoding/binary"
	"errors"
	"fmt"
	"math"
	"slices"
	"sort"
	"time"

	badger "github.com/dgraph-io/badger/v4"
)

// Reasons an as-of read finds nothing.
var (
	// ErrNoCheckpoint: no complete checkpoint at or before the sequence.
	ErrNoCheckpoint = errors.New("no checkpoint at or before the requested sequence")
	// ErrRetention: the sequence is before the retained history.
	ErrRetention = errors.New("sequence is before the retained history")
	// ErrUnknownNode: the node id was not known at the checkpoint read.
	ErrUnknownNode = errors.New("unknown node")
)

// cutAt returns the latest complete checkpoint with Seq ≤ seq.
func (st *Store) cutAt(seq uint64) (CheckpointInfo, error) {
	st.mu.RLock()
	defer st.mu.RUnlock()
	i := sort.Search(len(st.cps), func(i int) bool { return st.cps[i].Seq > seq }) - 1
	if i < 0 {
		return CheckpointInfo{}, fmt.Errorf("storage: read at %d: %w", seq, ErrNoCheckpoint)
	}
	if st.cps[i].Seq < st.floor {
		return CheckpointInfo{}, fmt.Errorf("storage: read at %d (floor %d): %w", seq, st.floor, ErrRetention)
	}
	return st.cps[i], nil
}

// Checkpoints lists the complete checkpoints still readable (at or above
// the retention floor), oldest first.
func (st *Store) Checkpoints() []CheckpointInfo {
	st.mu.RLock()
	defer st.mu.RUnlock()
	i := sort.Search(len(st.cps), func(i int) bool { return st.cps[i].Seq >= st.floor })
	return append([]CheckpointInfo(nil), st.cps[i:]...)
}

// nodeNumber looks node up in the dictionary as of cut.
func nodeNumber(txn *badger.Txn, node string, cut CheckpointInfo) (uint32, error) {
	item, err := txn.Get(keyName(pDictName, node))
	var x uint32
	if err == nil {
		err = item.Value(func(b []byte) error {
			if len(b) != 4 {
				return fmt.Errorf("corrupt dictionary record for %q", node)
			}
			x = binary.BigEndian.Uint32(b)
			return nil
		})
	}
	if errors.Is(err, badger.ErrKeyNotFound) || (err == nil && int(x) >= cut.Nodes) {
		return 0, fmt.Errorf("storage: node %q at checkpoint %d: %w", node, cut.Seq, ErrUnknownNode)
	}
	if err != nil {
		return 0, fmt.Errorf("storage: node %q at checkpoint %d: %w", node, cut.Seq, err)
	}
	return x, nil
}

// SeqAtTime returns the latest complete checkpoint whose event-time
// watermark is ≤ t, read through the watermark index, with ok true. When
// that checkpoint is below the retention floor it returns its seq with ok
// false; when there is none, 0 and false.
func (st *Store) SeqAtTime(t time.Time) (uint64, bool) {
	bits, err := watermarkBits(t)
	if err != nil {
		if t.Before(minWatermark) {
			return 0, false
		}
		bits = math.MaxUint64
	}
	st.mu.RLock()
	complete, floor := st.complete, st.floor
	st.mu.RUnlock()
	if complete == 0 {
		return 0, false
	}
	txn := st.db.NewTransactionAt(complete, false)
	defer txn.Discard()
	it := txn.NewIterator(badger.IteratorOptions{Prefix: []byte{pWatermark}, Reverse: true})
	defer it.Close()
	seek := binary.BigEndian.AppendUint64(binary.BigEndian.AppendUint64([]byte{pWatermark}, bits), math.MaxUint64)
	it.Seek(seek)
	if !it.Valid() || len(it.Item().Key()) != 17 {
		return 0, false
	}
	seq := beUint64(it.Item().Key()[9:])
	return seq, seq >= floor
}

// RecordChanges returns the retained complete checkpoints with
// fromSeq ≤ Seq ≤ toSeq at which node x's record was written (it changed,
// or the node's last edge went and it was deleted), oldest first. It reads
// the record's versions with one Badger all-versions iteration.
func (st *Store) RecordChanges(x uint32, fromSeq, toSeq uint64) ([]CheckpointInfo, error) {
	cps := st.Checkpoints()
	if len(cps) == 0 {
		return nil, nil
	}
	bySeq := make(map[uint64]CheckpointInfo, len(cps))
	for _, c := range cps {
		bySeq[c.Seq] = c
	}
	txn := st.db.NewTransactionAt(cps[len(cps)-1].Seq, false)
	defer txn.Discard()
	it := txn.NewIterator(badger.IteratorOptions{Prefix: keyID(pRecord, x), AllVersions: true})
	defer it.Close()
	var out []CheckpointInfo
	for it.Rewind(); it.Valid(); it.Next() {
		v := it.Item().Version()
		if v < fromSeq {
			break
		}
		if c, ok := bySeq[v]; ok && v <= toSeq {
			out = append(out, c)
		}
	}
	slices.Reverse(out)
	return out, nil
}

// NodeAt returns the number of the node name at the latest complete
// checkpoint with Seq ≤ seq, or ErrUnknownNode.
func (st *Store) NodeAt(name string, seq uint64) (uint32, CheckpointInfo, error) {
	cut, err := st.cutAt(seq)
	if err != nil {
		return 0, CheckpointInfo{}, err
	}
	txn := st.db.NewTransactionAt(cut.Seq, false)
	defer txn.Discard()
	x, err := nodeNumber(txn, name, cut)
	return x, cut, err
}
