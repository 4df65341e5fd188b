package storage

import (
	"encoding/binary"
	"fmt"
	"time"

	badger "github.com/dgraph-io/badger/v4"

	"orbitwatch/delta"
)

// State is the content of one complete checkpoint, but the records: they
// stay in the store and are read through Source (a counter's Restore, or
// Derive for single nodes).
type State struct {
	Seq       uint64
	Watermark time.Time
	Dict      *Dict
	Graph     *delta.Graph
	Blobs     map[string][]byte
	// Keyed are the keyed applier records in key order.
	Keyed []KeyedChange
}

// Load returns the last complete checkpoint. A store without checkpoints
// gives Seq 0, an empty dictionary and graph, and no blobs; the applier
// then starts from the beginning of the log.
func (st *Store) Load() (*State, error) {
	seq := st.Seq()
	if seq == 0 {
		return &State{Dict: NewDict(), Graph: delta.NewGraph(st.settings.Kind), Blobs: map[string][]byte{}}, nil
	}
	return st.LoadAt(seq)
}

// LoadAt returns the latest complete checkpoint with Seq ≤ seq: its
// dictionary, its graph (every stored multiplicity, by repeated
// Increment; a signed pair's two multiplicities set at once; one node per
// dictionary entry) and its blobs.
func (st *Store) LoadAt(seq uint64) (*State, error) {
	cut, err := st.cutAt(seq)
	if err != nil {
		return nil, err
	}
	s := &State{
		Seq:       cut.Seq,
		Watermark: cut.Watermark,
		Dict:      NewDict(),
		Graph:     delta.NewGraph(st.settings.Kind),
		Blobs:     make(map[string][]byte),
	}
	txn := st.db.NewTransactionAt(cut.Seq, false)
	defer txn.Discard()
	for _, step := range []func(*badger.Txn, *State, int) error{loadDict, loadEdges, loadBlobs, loadKeyed} {
		if err := step(txn, s, cut.Nodes); err != nil {
			return nil, fmt.Errorf("storage: load checkpoint %d from %s: %w", cut.Seq, st.dir, err)
		}
	}
	return s, nil
}

// scan calls fn for every key with prefix p visible to txn, stopping at the
// first error.
func scan(txn *badger.Txn, p []byte, fn func(key, val []byte) error) error {
	it := txn.NewIterator(badger.IteratorOptions{Prefix: p, PrefetchValues: true, PrefetchSize: 256})
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
	err := scan(txn, []byte{pDictID}, func(key, val []byte) error {
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
		err = fmt.Errorf("corrupt dictionary: %d entries stored, the checkpoint says %d", s.Dict.Len(), n)
	}
	s.Graph.Grow(n)
	return err
}

// loadEdges reads every pair once: under its smaller node for undirected
// graphs, as 'e' (out-arcs) for directed ones.
func loadEdges(txn *badger.Txn, s *State, n int) error {
	undirected := s.Graph.Kind() != delta.Directed
	return scan(txn, []byte{pEdge}, func(key, val []byte) error {
		if len(key) != 9 {
			return fmt.Errorf("corrupt edge key %x", key)
		}
		u, v := binary.BigEndian.Uint32(key[1:]), binary.BigEndian.Uint32(key[5:])
		if s.Graph.Kind() == delta.Signed {
			pos, neg, err := signedMultiplicities(val)
			if err != nil || pos+neg == 0 || pos+neg > 1<<32-1 || int(u) >= n || int(v) >= n || u == v {
				return fmt.Errorf("corrupt signed edge record %x = %x", key, val)
			}
			if u < v {
				s.Graph.SetMultiplicities(u, v, uint32(pos), uint32(neg))
			}
			return nil
		}
		m, err := getUvarint(val, "edge")
		if err != nil || m == 0 || m > 1<<32-1 || int(u) >= n || int(v) >= n || u == v {
			return fmt.Errorf("corrupt edge record %x = %x", key, val)
		}
		if undirected && u > v {
			return nil
		}
		for range m {
			if _, err := s.Graph.Increment(u, v); err != nil {
				return fmt.Errorf("edge %d-%d: %w", u, v, err)
			}
		}
		return nil
	})
}

func loadKeyed(txn *badger.Txn, s *State, _ int) error {
	return scan(txn, []byte{pKeyed}, func(key, val []byte) error {
		s.Keyed = append(s.Keyed, KeyedChange{Key: string(key[1:]), Value: append([]byte{}, val...)})
		return nil
	})
}

func loadBlobs(txn *badger.Txn, s *State, _ int) error {
	return scan(txn, []byte{pBlob}, func(key, val []byte) error {
		s.Blobs[string(key[1:])] = append([]byte{}, val...)
		return nil
	})
}

// signedMultiplicities decodes a signed pair's value: the positive and
// the negative multiplicity as two uvarints.
func signedMultiplicities(b []byte) (pos, neg uint64, err error) {
	pos, n := binary.Uvarint(b)
	if n > 0 {
		var m int
		neg, m = binary.Uvarint(b[n:])
		if m > 0 && n+m == len(b) {
			return pos, neg, nil
		}
	}
	return 0, 0, fmt.Errorf("signed edge record is not two uvarints (%d bytes)", len(b))
}
