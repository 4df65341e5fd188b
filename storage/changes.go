package storage

import (
	"encoding/binary"
	"fmt"
	"slices"

	badger "github.com/dgraph-io/badger/v4"

	"orbitwatch/delta"
)

// CutChanges is what one stored checkpoint changed: the names it added
// (in number order), the pairs whose multiplicity it wrote (each pair
// once, with the multiplicities after the checkpoint) and the nodes whose
// record it wrote. Applied in order to the state at the checkpoint before,
// Names and Edges give the graph at this one; Touched is the set of
// records the applier handed over at this cut.
type CutChanges struct {
	CheckpointInfo
	Names   []string
	Edges   []EdgeChange
	Touched []uint32
}

// ChangesBetween returns the changes of every retained complete
// checkpoint with fromSeq < Seq ≤ toSeq, oldest first, read from the
// versions Badger keeps of the pairs and records (one all-versions
// iteration over each). fromSeq must be 0 or a checkpoint at or above the
// retention floor, so that no version in the range was discarded.
//
// The iterations go over every retained version of every pair, so the
// cost is that of the retained history, not of the range: this is for
// rebuilding state at a restart and for re-evaluating rules over history,
// not for a per-cut path.
func (st *Store) ChangesBetween(fromSeq, toSeq uint64) ([]CutChanges, error) {
	if fromSeq < st.Floor() {
		return nil, fmt.Errorf("storage: changes after seq %d (floor %d): %w", fromSeq, st.Floor(), ErrRetention)
	}
	var out []CutChanges
	at := make(map[uint64]int)
	prev := 0 // the dictionary size at the checkpoint before
	for _, c := range st.Checkpoints() {
		if c.Seq > fromSeq && c.Seq <= toSeq {
			at[c.Seq] = len(out)
			out = append(out, CutChanges{CheckpointInfo: c, Names: make([]string, c.Nodes-prev)})
		}
		prev = c.Nodes
	}
	if len(out) == 0 {
		return nil, nil
	}
	txn := st.db.NewTransactionAt(out[len(out)-1].Seq, false)
	defer txn.Discard()
	directed := st.settings.Kind == delta.Directed
	signed := st.settings.Kind == delta.Signed
	err := versions(txn, pEdge, func(key []byte, version uint64, val []byte, deleted bool) error {
		i, ok := at[version]
		if !ok || len(key) != 9 {
			return nil
		}
		u, v := binary.BigEndian.Uint32(key[1:]), binary.BigEndian.Uint32(key[5:])
		if !directed && u > v {
			return nil // the same pair under its other node
		}
		e := EdgeChange{U: u, V: v}
		if !deleted {
			var err error
			if signed {
				var p, n uint64
				p, n, err = signedMultiplicities(val)
				e.Mult, e.Neg = uint32(p), uint32(n)
			} else {
				var m uint64
				m, err = getUvarint(val, "edge")
				e.Mult = uint32(m)
			}
			if err != nil {
				return fmt.Errorf("storage: pair %d–%d at checkpoint %d: %w", u, v, version, err)
			}
		}
		out[i].Edges = append(out[i].Edges, e)
		return nil
	})
	if err == nil {
		err = versions(txn, pDictID, func(key []byte, version uint64, val []byte, deleted bool) error {
			i, ok := at[version]
			if !ok || deleted || len(key) != 5 {
				return nil
			}
			x := int(binary.BigEndian.Uint32(key[1:]))
			c := &out[i]
			if first := c.Nodes - cap(c.Names); x < first || x >= c.Nodes {
				return fmt.Errorf("storage: name %d written at checkpoint %d, which holds names up to %d", x, version, c.Nodes)
			}
			c.Names[x-(c.Nodes-cap(c.Names))] = string(val)
			return nil
		})
	}
	if err == nil {
		err = versions(txn, pRecord, func(key []byte, version uint64, _ []byte, _ bool) error {
			if i, ok := at[version]; ok && len(key) == 5 {
				out[i].Touched = append(out[i].Touched, binary.BigEndian.Uint32(key[1:]))
			}
			return nil
		})
	}
	if err != nil {
		return nil, err
	}
	for i := range out {
		slices.Sort(out[i].Touched)
		for j, name := range out[i].Names {
			if name == "" {
				return nil, fmt.Errorf("storage: name %d of checkpoint %d is missing", out[i].Nodes-len(out[i].Names)+j, out[i].Seq)
			}
		}
	}
	return out, nil
}

// versions calls fn with every retained version of every key under prefix
// p visible to txn (deleted ones with deleted set and no value).
func versions(txn *badger.Txn, p byte, fn func(key []byte, version uint64, val []byte, deleted bool) error) error {
	it := txn.NewIterator(badger.IteratorOptions{Prefix: []byte{p}, AllVersions: true, PrefetchValues: false})
	defer it.Close()
	for it.Rewind(); it.Valid(); it.Next() {
		item := it.Item()
		if item.IsDeletedOrExpired() {
			if err := fn(item.Key(), item.Version(), nil, true); err != nil {
				return err
			}
			continue
		}
		if err := item.Value(func(val []byte) error { return fn(item.Key(), item.Version(), val, false) }); err != nil {
			return err
		}
	}
	return nil
}
