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

// Compact merges Badger's levels now, which applies the discard timestamp
// to everything already flushed from memory, then runs value-log GC.
// Background compaction does the same eventually; Compact is for tests,
// tooling and quiet hours.
func (st *Store) Compact() error {
	if st.readOnly {
		return fmt.Errorf("storage: compact: store opened read-only")
	}
	if err := st.db.Flatten(2); err != nil {
		return fmt.Errorf("storage: compact: %w", err)
	}
	return st.CollectValueLog()
}
