package storage

import (
	"encoding/binary"
	"fmt"
	"time"

	badger "github.com/dgraph-io/badger/v4"

	"orbitwatch/delta"
)

// State is the content of one complete checkpoint.
type State struct {
	Seq       uint64
	Watermark time.Time
	Dict      *Dict
	Graph     *delta.Graph
	Vectors   *delta.Vectors
	Blobs     map[string][]byte
}

// Load returns the last complete checkpoint. A store without checkpoints
// gives Seq 0, an empty dictionary, graph and vectors, and no blobs; the
// applier then starts from the beginning of the log. The graph gets every
// stored multiplicity by repeated Increment; Graph and Vectors have one
// row per dictionary entry.
func (st *Store) Load() (*State, error) {
	st.mu.RLock()
	seq, n := st.complete, st.dictLen
	var wm time.Time
	if len(st.cps) > 0 {
		wm = st.cps[len(st.cps)-1].Watermark
	}
	st.mu.RUnlock()
	s := &State{
		Seq:       seq,
		Watermark: wm,
		Dict:      NewDict(),
		Graph:     delta.NewGraph(st.settings.Kind),
		Vectors:   delta.NewVectors(0, st.settings.NumOrbits),
		Blobs:     make(map[string][]byte),
	}
	if seq == 0 {
		return s, nil
	}
	txn := st.db.NewTransactionAt(seq, false)
	defer txn.Discard()
	steps := []func(*badger.Txn, *State, int) error{loadDict, loadEdges, loadVectors, loadBlobs}
	for _, step := range steps {
		if err := step(txn, s, n); err != nil {
			return nil, fmt.Errorf("storage: load checkpoint %d from %s: %w", seq, st.dir, err)
		}
	}
	s.Dict.written = n
	return s, nil
}

// scan calls fn for every key with prefix p visible to txn, stopping at the
// first error.
func scan(txn *badger.Txn, p byte, fn func(key, val []byte) error) error {
	it := txn.NewIterator(badger.IteratorOptions{Prefix: []byte{p}, PrefetchValues: true, PrefetchSize: 256})
	defer it.Close()
	for it.Rewind(); it.Valid(); it.Next() {
		item := it.Item()
		key := item.Key()
		if err := item.Value(func(val []byte) error { return fn(key, val) }); err != nil {
			return err
		}
	}
	return nil
}

func loadDict(txn *badger.Txn, s *State, n int) error {
	s.Dict.names = make([]string, 0, n)
	s.Dict.ids = make(map[string]uint32, n)
	err := scan(txn, pDictID, func(key, val []byte) error {
		if len(key) != 5 || binary.BigEndian.Uint32(key[1:]) != uint32(s.Dict.Len()) {
			return fmt.Errorf("corrupt dictionary: key %x where number %d was due", key, s.Dict.Len())
		}
		if _, dup := s.Dict.ids[string(val)]; dup {
			return fmt.Errorf("corrupt dictionary: id %q stored twice", val)
		}
		s.Dict.add(string(val))
		return nil
	})
	if err == nil && s.Dict.Len() != n {
		err = fmt.Errorf("corrupt dictionary: %d entries stored, meta says %d", s.Dict.Len(), n)
	}
	s.Graph.Grow(n)
	s.Vectors.Grow(n)
	return err
}

func loadEdges(txn *badger.Txn, s *State, n int) error {
	undirected := s.Graph.Kind() == delta.Undirected
	return scan(txn, pEdge, func(key, val []byte) error {
		if len(key) != 9 {
			return fmt.Errorf("corrupt edge key %x", key)
		}
		u, v := binary.BigEndian.Uint32(key[1:]), binary.BigEndian.Uint32(key[5:])
		m, err := getUvarint(val, "edge")
		if err != nil || m == 0 || m > 1<<32-1 || int(u) >= n || int(v) >= n || u == v || (undirected && u > v) {
			return fmt.Errorf("corrupt edge record %x = %x", key, val)
		}
		for range m {
			if _, err := s.Graph.Increment(u, v); err != nil {
				return fmt.Errorf("edge %d-%d: %w", u, v, err)
			}
		}
		return nil
	})
}

func loadVectors(txn *badger.Txn, s *State, n int) error {
	return scan(txn, pVector, func(key, val []byte) error {
		if len(key) != 5 || int(binary.BigEndian.Uint32(key[1:])) >= n {
			return fmt.Errorf("corrupt vector key %x", key)
		}
		if err := decodeVector(val, s.Vectors.Row(binary.BigEndian.Uint32(key[1:]))); err != nil {
			return fmt.Errorf("node %d: %w", binary.BigEndian.Uint32(key[1:]), err)
		}
		return nil
	})
}

func loadBlobs(txn *badger.Txn, s *State, _ int) error {
	return scan(txn, pBlob, func(key, val []byte) error {
		s.Blobs[string(key[1:])] = append([]byte{}, val...)
		return nil
	})
}
