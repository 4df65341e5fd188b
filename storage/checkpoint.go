package storage

import (
	"bytes"
	"cmp"
	"encoding/binary"
	"fmt"
	"slices"
	"time"

	badger "github.com/dgraph-io/badger/v4"

	"orbitwatch/delta"
)

// Checkpoint is one cut's state change, already taken out of the live
// state: a writer can hold several while the applier goes on.
type Checkpoint struct {
	// Seq is the log position the state is complete at; it must exceed
	// the previous checkpoint's.
	Seq uint64
	// Watermark is the event-time watermark at Seq; it must not be earlier
	// than the previous checkpoint's.
	Watermark time.Time
	// Names are the dictionary entries added since the previous
	// checkpoint, in number order.
	Names []string
	// Edges are the pairs whose multiplicity changed since the previous
	// checkpoint (either order for undirected graphs; the last entry for a
	// pair wins), with the new multiplicity; 0 deletes the pair.
	Edges []EdgeChange
	// Records are the nodes whose record changed, with the new record; an
	// empty record deletes it (an all-zero record).
	Records []RecordChange
	// Alerts are the alerts raised at this cut (see AlertRecord), stored
	// in the same write as the cut.
	Alerts []AlertRecord
	// Flush marks a checkpoint taken where the input ended (or a command
	// stopped), not where the cut rules put one: it makes the state
	// durable, but alert rules are evaluated, and baselines read, only at
	// the rules' cuts, so that where an input happened to end changes no
	// alert.
	Flush bool
	// Blobs are opaque applier records (input progress). A blob keeps its
	// last written value until rewritten; a nil value deletes it.
	Blobs map[string][]byte
	// Keyed are opaque applier records kept one key each (pending window
	// expiries), so that a change costs its own size, not the whole set's;
	// a nil value deletes the key.
	Keyed []KeyedChange
}

// KeyedChange is one keyed applier record's new value (nil deletes it).
type KeyedChange struct {
	Key   string
	Value []byte
}

// EdgeChange is a pair's new multiplicity; in a Signed store Mult is the
// positive and Neg the negative multiplicity (Neg is 0 for the other
// kinds). Both zero deletes the pair.
type EdgeChange struct {
	U, V uint32
	Mult uint32
	Neg  uint32
}

// RecordChange is a node's new record.
type RecordChange struct {
	Node uint32
	Data []byte
}

// Commit makes the checkpoints durable, oldest first, each at Badger
// version = its Seq. Their records go through one managed write batch
// (several Badger transactions for a big group) together with each
// checkpoint's record and watermark index entry; after they are synced,
// one last transaction at the newest checkpoint's version writes the meta
// record that makes them complete. Until then readers and recovery see
// the previous complete checkpoint, and a crash leaves nothing visible
// (Open's repair removes the leftovers). Grouping cuts saves a sync per
// cut when a log is replayed faster than it happened.
//
// Bad arguments from the caller's data (sequence not increasing, watermark
// going back or out of range, names that do not continue the dictionary)
// are errors and write nothing. A node or pair beyond the dictionary is a
// programmer error and panics. After a failure half-way through, the
// store refuses further commits until it is reopened (which repairs it).
func (st *Store) Commit(cps ...*Checkpoint) error {
	if len(cps) == 0 {
		return nil
	}
	last := cps[len(cps)-1].Seq
	if st.readOnly {
		return fmt.Errorf("storage: commit %d: store opened read-only", last)
	}
	st.mu.RLock()
	complete, dictLen, failed := st.complete, st.dictLen, st.failed
	stays := complete
	var lastWM time.Time
	if n := len(st.cps); n > 0 {
		lastWM = st.cps[n-1].Watermark
	}
	st.mu.RUnlock()
	if failed != nil {
		return fmt.Errorf("storage: commit %d: an earlier commit failed half-way; reopen the store: %w", last, failed)
	}
	infos := make([]CheckpointInfo, len(cps))
	for i, cp := range cps {
		if cp.Seq <= complete {
			return fmt.Errorf("storage: commit %d: sequence does not exceed the last checkpoint %d", cp.Seq, complete)
		}
		if cp.Watermark.Before(lastWM) {
			return fmt.Errorf("storage: commit %d: watermark %v is before the previous checkpoint's %v", cp.Seq, cp.Watermark, lastWM)
		}
		if _, err := watermarkBits(cp.Watermark); err != nil {
			return fmt.Errorf("storage: commit %d: %w", cp.Seq, err)
		}
		dictLen += len(cp.Names)
		st.checkShapes(cp, dictLen)
		if err := checkAlerts(cp.Seq, cp.Alerts); err != nil {
			return fmt.Errorf("storage: commit %d: %w", cp.Seq, err)
		}
		complete, lastWM = cp.Seq, cp.Watermark
		infos[i] = CheckpointInfo{Seq: cp.Seq, Watermark: watermarkTime(mustBits(cp.Watermark)), Nodes: dictLen, Flush: cp.Flush}
	}
	w, err := st.prepareRecords(cps, infos)
	if err != nil {
		return fmt.Errorf("storage: commit %d: %w", last, err)
	}
	// Nothing has reached Badger yet: a refusal for want of space leaves
	// the store as it was, and the same commit may be tried again.
	if err := checkRoom(st.dir, fmt.Sprintf("commit the cut at seq %d", last), w.size(), stays); err != nil {
		return fmt.Errorf("storage: commit %d: %w", last, err)
	}
	if err := st.writeRecords(w); err != nil {
		st.fail(err)
		return fmt.Errorf("storage: commit %d: %w", last, err)
	}
	if err := st.writeMeta(last, dictLen); err != nil {
		st.fail(err)
		return fmt.Errorf("storage: commit %d: %w", last, err)
	}
	st.mu.Lock()
	st.complete, st.dictLen = last, dictLen
	st.cps = append(st.cps, infos...)
	for k, vs := range st.torn {
		if vs[0] <= last { // versions are listed newest first
			delete(st.torn, k)
			continue
		}
		for i, v := range vs {
			if v <= last {
				st.torn[k] = vs[:i]
				break
			}
		}
	}
	st.mu.Unlock()
	return nil
}

func mustBits(t time.Time) uint64 {
	b, err := watermarkBits(t)
	if err != nil {
		panic("storage: " + err.Error())
	}
	return b
}

func (st *Store) fail(err error) {
	st.mu.Lock()
	st.failed = err
	st.mu.Unlock()
}

// checkShapes panics when cp names a node beyond the dictionary of n
// entries it leaves.
func (st *Store) checkShapes(cp *Checkpoint, n int) {
	for _, e := range cp.Edges {
		if int(e.U) >= n || int(e.V) >= n || e.U == e.V {
			panic("storage: checkpoint edge with an unknown node or a self-loop")
		}
		if e.Neg > 0 && st.settings.Kind != delta.Signed {
			panic("storage: a negative multiplicity in a store that is not signed")
		}
	}
	for _, r := range cp.Records {
		if int(r.Node) >= n {
			panic("storage: checkpoint record of a node missing from the dictionary")
		}
	}
}

// batchWriter collects records at one version (several, for a group of
// checkpoints), writing through to the versions a torn checkpoint left
// above it (see repair). Keys and values are carved from large chunks
// because Badger keeps the slices until the batch is flushed. The entries
// are handed to Badger in key order (flush): inserting into its memtable
// in order keeps the skiplist's search path in cache, which measured
// several times faster than the order they are made in.
type batchWriter struct {
	wb      *badger.WriteBatch
	seq     uint64
	torn    map[string][]uint64
	chunk   []byte
	entries []pending
}

type pending struct {
	key, val []byte
	del      bool
	ts       uint64
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
	w.entries = append(w.entries, pending{key: k, val: v, del: del, ts: ts})
	return nil
}

// size bounds the bytes the entries add to Badger's log, the meta
// record's transaction included.
func (w *batchWriter) size() uint64 {
	n := uint64(2 * entryOverhead)
	for _, e := range w.entries {
		n += uint64(len(e.key)+len(e.val)) + entryOverhead
	}
	return n
}

// flush hands the entries to Badger sorted by key, then version, keeping
// the order they were put in among equal ones (the last put wins).
func (w *batchWriter) flush() error {
	slices.SortStableFunc(w.entries, func(a, b pending) int {
		if c := bytes.Compare(a.key, b.key); c != 0 {
			return c
		}
		return cmp.Compare(a.ts, b.ts)
	})
	for _, e := range w.entries {
		var err error
		if e.del {
			err = w.wb.DeleteAt(e.key, e.ts)
		} else {
			err = w.wb.SetEntryAt(badger.NewEntry(e.key, e.val), e.ts)
		}
		if err != nil {
			return err
		}
	}
	w.entries = nil
	return w.wb.Flush()
}

// prepareRecords puts every entry of cps in a batch writer without
// writing anything.
func (st *Store) prepareRecords(cps []*Checkpoint, infos []CheckpointInfo) (*batchWriter, error) {
	w := &batchWriter{torn: st.torn}
	next := infos[0].Nodes - len(cps[0].Names)
	for i, cp := range cps {
		w.seq = cp.Seq
		var err error
		if next, err = st.writeCheckpoint(w, cp, next, infos[i]); err != nil {
			return nil, err
		}
	}
	return w, nil
}

// writeRecords hands w's entries to Badger in one managed write batch and
// syncs them.
func (st *Store) writeRecords(w *batchWriter) error {
	w.wb = st.db.NewManagedWriteBatch()
	defer w.wb.Cancel()
	if err := w.flush(); err != nil {
		return err
	}
	return st.db.Sync()
}

// writeCheckpoint puts one checkpoint's entries; next is the number of the
// first new name. It returns the number after the last.
func (st *Store) writeCheckpoint(w *batchWriter, cp *Checkpoint, next int, info CheckpointInfo) (int, error) {
	var key, val []byte
	for _, name := range cp.Names {
		key = binary.BigEndian.AppendUint32(append(key[:0], pDictID), uint32(next))
		if err := w.put(key, []byte(name), false); err != nil {
			return 0, err
		}
		key = append(append(key[:0], pDictName), name...)
		val = binary.BigEndian.AppendUint32(val[:0], uint32(next))
		if err := w.put(key, val, false); err != nil {
			return 0, err
		}
		next++
	}
	directed := st.settings.Kind == delta.Directed
	signed := st.settings.Kind == delta.Signed
	for _, e := range cp.Edges {
		// A signed pair's value is both multiplicities; the other kinds
		// keep the single one.
		val = binary.AppendUvarint(val[:0], uint64(e.Mult))
		if signed {
			val = binary.AppendUvarint(val, uint64(e.Neg))
		}
		pairs := [2][3]uint32{{pEdge, e.U, e.V}, {pEdge, e.V, e.U}}
		if directed {
			pairs[1] = [3]uint32{pInArc, e.V, e.U}
		}
		for _, p := range pairs {
			key = appendPairKey(key[:0], byte(p[0]), p[1], p[2])
			if err := w.put(key, val, e.Mult == 0 && e.Neg == 0); err != nil {
				return 0, err
			}
		}
	}
	for _, r := range cp.Records {
		key = binary.BigEndian.AppendUint32(append(key[:0], pRecord), r.Node)
		if err := w.put(key, r.Data, len(r.Data) == 0); err != nil {
			return 0, err
		}
	}
	if err := putAlerts(w, cp.Alerts); err != nil {
		return 0, err
	}
	for _, k := range cp.Keyed {
		key = append(append(key[:0], pKeyed), k.Key...)
		if err := w.put(key, k.Value, k.Value == nil); err != nil {
			return 0, err
		}
	}
	for name, b := range cp.Blobs {
		key = append(append(key[:0], pBlob), name...)
		if err := w.put(key, b, b == nil); err != nil {
			return 0, err
		}
	}
	wm := mustBits(cp.Watermark)
	var wmb [8]byte
	binary.BigEndian.PutUint64(wmb[:], wm)
	idx := append(append([]byte{pWatermark}, wmb[:]...), keySeq(0, cp.Seq)[1:]...)
	rec := binary.AppendUvarint(wmb[:], uint64(info.Nodes))
	if cp.Flush {
		rec = append(rec, checkpointFlush)
	}
	if err := w.put(keySeq(pCheckpoint, cp.Seq), rec, false); err != nil {
		return 0, err
	}
	return next, w.put(idx, []byte{}, false)
}

// writeMeta commits, in one transaction at version seq, the meta record
// (dictionary size) that makes every checkpoint up to seq complete.
func (st *Store) writeMeta(seq uint64, dictLen int) error {
	txn := st.db.NewTransactionAt(seq, true)
	defer txn.Discard()
	if err := txn.Set([]byte{pMeta}, binary.AppendUvarint(nil, uint64(dictLen))); err != nil {
		return err
	}
	if err := txn.CommitAt(seq, nil); err != nil {
		return err
	}
	return st.db.Sync()
}
