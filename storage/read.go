package storage

import (
	"encoding/binary"
	"errors"
	"fmt"
	"math"
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

// VectorAt returns node's orbit vector as of the latest complete
// checkpoint with Seq ≤ seq (the cut), with the cut's sequence and
// watermark. A node known at the cut but never given a vector reads as all
// zero.
func (st *Store) VectorAt(node string, seq uint64) (vec []uint64, cutSeq uint64, watermark time.Time, err error) {
	cut, err := st.cutAt(seq)
	if err != nil {
		return nil, 0, time.Time{}, err
	}
	txn := st.db.NewTransactionAt(cut.Seq, false)
	defer txn.Discard()
	x, err := nodeNumber(txn, node, cut)
	if err != nil {
		return nil, 0, time.Time{}, err
	}
	vec = make([]uint64, st.settings.NumOrbits)
	item, err := txn.Get(keyID(pVector, x))
	if errors.Is(err, badger.ErrKeyNotFound) {
		return vec, cut.Seq, cut.Watermark, nil
	}
	if err == nil {
		err = item.Value(func(b []byte) error { return decodeVector(b, vec) })
	}
	if err != nil {
		return nil, 0, time.Time{}, fmt.Errorf("storage: vector of %q at %d: %w", node, cut.Seq, err)
	}
	return vec, cut.Seq, cut.Watermark, nil
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

// Version is a node's orbit vector at one checkpoint.
type Version struct {
	Seq       uint64
	Watermark time.Time
	Vector    []uint64
	// Changed reports that the vector differs from the previous
	// checkpoint's, or that the node first appears at this checkpoint.
	Changed bool
}

// History returns node's vector at every retained complete checkpoint with
// fromSeq ≤ Seq ≤ toSeq at which the node existed, oldest first; a
// checkpoint where it did not change repeats the carried-over vector with
// Changed false. The range is clipped to the retained history. It reads
// the node's versions with one Badger all-versions iteration.
func (st *Store) History(node string, fromSeq, toSeq uint64) ([]Version, error) {
	cps := st.Checkpoints()
	lo := sort.Search(len(cps), func(i int) bool { return cps[i].Seq >= fromSeq })
	hi := sort.Search(len(cps), func(i int) bool { return cps[i].Seq > toSeq })
	if lo >= hi {
		return nil, nil
	}
	last := cps[len(cps)-1]
	lookup := st.db.NewTransactionAt(last.Seq, false)
	x, err := nodeNumber(lookup, node, last)
	lookup.Discard()
	if err != nil {
		return nil, err
	}
	txn := st.db.NewTransactionAt(cps[hi-1].Seq, false)
	defer txn.Discard()
	// Versions of the vector, newest first, down to the one in force at the
	// checkpoint before the range (for Changed).
	var stop uint64
	if lo > 0 {
		stop = cps[lo-1].Seq
	}
	type ver struct {
		seq uint64
		val []byte // nil: absent
	}
	var vers []ver
	key := keyID(pVector, x)
	it := txn.NewIterator(badger.IteratorOptions{Prefix: key, AllVersions: true})
	defer it.Close()
	for it.Rewind(); it.Valid(); it.Next() {
		item := it.Item()
		v := ver{seq: item.Version()}
		if !item.IsDeletedOrExpired() {
			if v.val, err = item.ValueCopy(nil); err != nil {
				return nil, fmt.Errorf("storage: history of %q: %w", node, err)
			}
		}
		vers = append(vers, v)
		if v.seq <= stop {
			break
		}
	}
	// valueAt decodes the version in force at seq into a new slice.
	valueAt := func(seq uint64) ([]uint64, error) {
		vec := make([]uint64, st.settings.NumOrbits)
		i := sort.Search(len(vers), func(i int) bool { return vers[i].seq <= seq })
		if i < len(vers) && vers[i].val != nil {
			if err := decodeVector(vers[i].val, vec); err != nil {
				return nil, fmt.Errorf("storage: history of %q at %d: %w", node, seq, err)
			}
		}
		return vec, nil
	}
	var prev []uint64
	if lo > 0 && cps[lo-1].Nodes > int(x) {
		if prev, err = valueAt(stop); err != nil {
			return nil, err
		}
	}
	var out []Version
	for _, c := range cps[lo:hi] {
		if c.Nodes <= int(x) {
			continue
		}
		vec, err := valueAt(c.Seq)
		if err != nil {
			return nil, err
		}
		out = append(out, Version{Seq: c.Seq, Watermark: c.Watermark, Vector: vec, Changed: prev == nil || !equalCounts(prev, vec)})
		prev = vec
	}
	return out, nil
}

func equalCounts(a, b []uint64) bool {
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

// ForEachAt calls fn for every node known at the latest complete checkpoint
// with Seq ≤ seq, in dictionary order, with its vector there (all zero if
// it never had one), and returns that checkpoint's sequence. vec is reused
// between calls. The first error from fn stops the walk and is returned.
func (st *Store) ForEachAt(seq uint64, fn func(node string, vec []uint64) error) (uint64, error) {
	cut, err := st.cutAt(seq)
	if err != nil {
		return 0, err
	}
	txn := st.db.NewTransactionAt(cut.Seq, false)
	defer txn.Discard()
	names := txn.NewIterator(badger.IteratorOptions{Prefix: []byte{pDictID}, PrefetchValues: true, PrefetchSize: 256})
	defer names.Close()
	vecs := txn.NewIterator(badger.IteratorOptions{Prefix: []byte{pVector}, PrefetchValues: true, PrefetchSize: 256})
	defer vecs.Close()
	vec := make([]uint64, st.settings.NumOrbits)
	vecs.Rewind()
	want := uint32(0)
	for names.Rewind(); names.Valid() && int(want) < cut.Nodes; names.Next() {
		k := names.Item().Key()
		if len(k) != 5 || binary.BigEndian.Uint32(k[1:]) != want {
			return 0, fmt.Errorf("storage: export at %d: corrupt dictionary key %x where number %d was due", cut.Seq, k, want)
		}
		for vecs.Valid() && binary.BigEndian.Uint32(vecs.Item().Key()[1:]) < want {
			vecs.Next()
		}
		clear(vec)
		if vecs.Valid() && binary.BigEndian.Uint32(vecs.Item().Key()[1:]) == want {
			if err := vecs.Item().Value(func(b []byte) error { return decodeVector(b, vec) }); err != nil {
				return 0, fmt.Errorf("storage: export at %d: node %d: %w", cut.Seq, want, err)
			}
		}
		var name []byte
		if name, err = names.Item().ValueCopy(name); err != nil {
			return 0, err
		}
		if err := fn(string(name), vec); err != nil {
			return 0, err
		}
		want++
	}
	if int(want) != cut.Nodes {
		return 0, fmt.Errorf("storage: export at %d: dictionary has %d entries, checkpoint says %d", cut.Seq, want, cut.Nodes)
	}
	return cut.Seq, nil
}
