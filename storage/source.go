package storage

import (
	"encoding/binary"
	"errors"
	"fmt"

	badger "github.com/dgraph-io/badger/v4"

	"orbitwatch/delta"
)

// Source reads the records and adjacency of one complete checkpoint: the
// delta.Source a counter derives as-of vectors from and restores itself
// from. It holds a Badger read transaction until Close; it is not safe for
// concurrent use (open one per goroutine).
type Source struct {
	st       *Store
	txn      *badger.Txn
	cut      CheckpointInfo
	directed bool
	signed   bool
	key, val []byte
}

var _ delta.Source = (*Source)(nil)

// SourceAt opens a Source at the latest complete checkpoint with Seq ≤ seq.
func (st *Store) SourceAt(seq uint64) (*Source, error) {
	cut, err := st.cutAt(seq)
	if err != nil {
		return nil, err
	}
	return &Source{st: st, txn: st.db.NewTransactionAt(cut.Seq, false), cut: cut, directed: st.settings.Kind == delta.Directed, signed: st.settings.Kind == delta.Signed}, nil
}

// Checkpoint returns the checkpoint the source reads.
func (s *Source) Checkpoint() CheckpointInfo { return s.cut }

// Close ends the read transaction.
func (s *Source) Close() { s.txn.Discard() }

// Node returns the number of a node name at the checkpoint, or
// ErrUnknownNode.
func (s *Source) Node(name string) (uint32, error) { return nodeNumber(s.txn, name, s.cut) }

// Name returns the name of node x.
func (s *Source) Name(x uint32) (string, error) {
	item, err := s.txn.Get(keyID(pDictID, x))
	if err != nil {
		return "", fmt.Errorf("storage: name of node %d at %d: %w", x, s.cut.Seq, err)
	}
	b, err := item.ValueCopy(nil)
	return string(b), err
}

// Record returns x's stored record, nil when it has none.
func (s *Source) Record(x uint32) ([]byte, error) {
	s.key = binary.BigEndian.AppendUint32(append(s.key[:0], pRecord), x)
	item, err := s.txn.Get(s.key)
	if errors.Is(err, badger.ErrKeyNotFound) {
		return nil, nil
	}
	if err == nil {
		s.val, err = item.ValueCopy(s.val[:0])
	}
	if err != nil {
		return nil, fmt.Errorf("storage: record of node %d at %d: %w", x, s.cut.Seq, err)
	}
	return s.val, nil
}

// Adjacent appends to dst[:0] the nodes joined to x in increasing order
// (with LinkNeg for a negative pair of a signed store).
func (s *Source) Adjacent(x uint32, dst []delta.Adj) ([]delta.Adj, error) {
	dst = dst[:0]
	if s.signed {
		err := s.scanSigned(x, func(y uint32, neg bool) {
			l := delta.LinkOut | delta.LinkIn
			if neg {
				l |= delta.LinkNeg
			}
			dst = append(dst, delta.Adj{Node: y, Links: l})
		})
		return dst, err
	}
	out := delta.LinkOut | delta.LinkIn
	if s.directed {
		out = delta.LinkOut
	}
	if err := s.scanPairs(pEdge, x, func(y uint32) { dst = append(dst, delta.Adj{Node: y, Links: out}) }); err != nil {
		return nil, err
	}
	if !s.directed {
		return dst, nil
	}
	// Merge the in-arcs into the sorted out-arcs.
	var in []uint32
	if err := s.scanPairs(pInArc, x, func(y uint32) { in = append(in, y) }); err != nil {
		return nil, err
	}
	outs := len(dst)
	i := 0
	for _, y := range in {
		for i < outs && dst[i].Node < y {
			i++
		}
		if i < outs && dst[i].Node == y {
			dst[i].Links |= delta.LinkIn
		} else {
			dst = append(dst, delta.Adj{Node: y, Links: delta.LinkIn})
		}
	}
	if len(dst) > outs {
		sortAdj(dst)
	}
	return dst, nil
}

func sortAdj(a []delta.Adj) {
	// Insertion sort of the appended tail into place keeps this
	// allocation-free; in-arcs that are not also out-arcs are few per node
	// in payment graphs, and correctness does not depend on it.
	for i := 1; i < len(a); i++ {
		for j := i; j > 0 && a[j-1].Node > a[j].Node; j-- {
			a[j-1], a[j] = a[j], a[j-1]
		}
	}
}

// scanPairs calls f for every y with a key p x y.
func (s *Source) scanPairs(p byte, x uint32, f func(y uint32)) error {
	prefix := binary.BigEndian.AppendUint32([]byte{p}, x)
	it := s.txn.NewIterator(badger.IteratorOptions{Prefix: prefix})
	defer it.Close()
	for it.Rewind(); it.Valid(); it.Next() {
		k := it.Item().Key()
		if len(k) != 9 {
			return fmt.Errorf("storage: corrupt adjacency key %x at %d", k, s.cut.Seq)
		}
		f(binary.BigEndian.Uint32(k[5:]))
	}
	return nil
}

// scanSigned calls f for every pair x–y of a signed store with its sign.
func (s *Source) scanSigned(x uint32, f func(y uint32, neg bool)) error {
	prefix := binary.BigEndian.AppendUint32([]byte{pEdge}, x)
	it := s.txn.NewIterator(badger.IteratorOptions{Prefix: prefix, PrefetchValues: true, PrefetchSize: 64})
	defer it.Close()
	for it.Rewind(); it.Valid(); it.Next() {
		item := it.Item()
		k := item.Key()
		if len(k) != 9 {
			return fmt.Errorf("storage: corrupt adjacency key %x at %d", k, s.cut.Seq)
		}
		y := binary.BigEndian.Uint32(k[5:])
		err := item.Value(func(val []byte) error {
			_, neg, err := signedMultiplicities(val)
			f(y, neg > 0)
			return err
		})
		if err != nil {
			return fmt.Errorf("storage: pair %d-%d at %d: %w", x, y, s.cut.Seq, err)
		}
	}
	return nil
}

// Linked returns how y is joined to x.
func (s *Source) Linked(x, y uint32) (delta.Link, error) {
	if s.signed {
		s.key = appendPairKey(s.key[:0], pEdge, x, y)
		item, err := s.txn.Get(s.key)
		if errors.Is(err, badger.ErrKeyNotFound) {
			return 0, nil
		}
		if err == nil {
			s.val, err = item.ValueCopy(s.val[:0])
		}
		var neg uint64
		if err == nil {
			_, neg, err = signedMultiplicities(s.val)
		}
		if err != nil {
			return 0, fmt.Errorf("storage: pair %d-%d at %d: %w", x, y, s.cut.Seq, err)
		}
		if neg > 0 {
			return delta.LinkOut | delta.LinkIn | delta.LinkNeg, nil
		}
		return delta.LinkOut | delta.LinkIn, nil
	}
	has := func(p byte, a, b uint32) (bool, error) {
		s.key = appendPairKey(s.key[:0], p, a, b)
		_, err := s.txn.Get(s.key)
		if errors.Is(err, badger.ErrKeyNotFound) {
			return false, nil
		}
		if err != nil {
			return false, fmt.Errorf("storage: pair %d-%d at %d: %w", a, b, s.cut.Seq, err)
		}
		return true, nil
	}
	o, err := has(pEdge, x, y)
	if err != nil {
		return 0, err
	}
	if !s.directed {
		if o {
			return delta.LinkOut | delta.LinkIn, nil
		}
		return 0, nil
	}
	i, err := has(pEdge, y, x)
	var l delta.Link
	if o {
		l |= delta.LinkOut
	}
	if i {
		l |= delta.LinkIn
	}
	return l, err
}
