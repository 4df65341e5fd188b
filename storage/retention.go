package storage

import (
	"encoding/binary"
	"fmt"
	"sort"
)

// SetDiscardBefore lets Badger drop versions that only reads before seq
// need. The retention floor becomes the latest complete checkpoint ≤ seq:
// reads at that checkpoint and later stay exact, reads before it fail with
// ErrRetention from now on (even where compaction has not yet dropped the
// data, so results do not depend on compaction timing). The floor is
// persisted and never moves back; Badger's discard timestamp is set to it,
// and compactions then keep, per key, only the latest version at or below
// it. Nothing is deleted by hand.
func (st *Store) SetDiscardBefore(seq uint64) error {
	if st.readOnly {
		return fmt.Errorf("storage: retention: store opened read-only")
	}
	st.mu.Lock()
	defer st.mu.Unlock()
	i := sort.Search(len(st.cps), func(i int) bool { return st.cps[i].Seq > seq }) - 1
	if i < 0 || st.cps[i].Seq <= st.floor {
		return nil
	}
	floor := st.cps[i].Seq
	if err := checkRoom(st.dir, "record the retention floor", 64, st.complete); err != nil {
		return fmt.Errorf("storage: retention: %w", err)
	}
	txn := st.db.NewTransactionAt(st.complete, true)
	defer txn.Discard()
	if err := txn.Set([]byte{pFloor}, binary.AppendUvarint(nil, floor)); err != nil {
		return fmt.Errorf("storage: retention: %w", err)
	}
	if err := txn.CommitAt(st.complete, nil); err != nil {
		return fmt.Errorf("storage: retention: %w", err)
	}
	if err := st.db.Sync(); err != nil {
		return fmt.Errorf("storage: retention: %w", err)
	}
	st.floor = floor
	st.db.SetDiscardTs(floor)
	return nil
}

// Floor returns the retention floor: the oldest checkpoint still readable
// (0 when nothing was discarded).
func (st *Store) Floor() uint64 {
	st.mu.RLock()
	defer st.mu.RUnlock()
	return st.floor
}

// Compact merges Badger's levels into one now when tables sit on more than
// one level, applying the discard timestamp to them, then runs value-log
// GC. Data still in memory or in level 0 alone is compacted by Badger's own
// compactions as it grows, and on Close. Dropping old versions is thus
// eventual; reads below the floor fail either way.
func (st *Store) Compact() error {
	if st.readOnly {
		return fmt.Errorf("storage: compact: store opened read-only")
	}
	if err := st.db.Flatten(2); err != nil {
		return fmt.Errorf("storage: compact: %w", err)
	}
	return st.CollectValueLog()
}
