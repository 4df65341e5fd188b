package alert

import (
	"errors"
	"time"

	"orbitwatch/storage"
)

// ReadBaseline is the caller's as-of read for BaselineLookback: node's
// vector as of the latest complete, retained checkpoint of st whose
// event-time watermark is ≤ at − lookback (storage.Store.SeqAtTime, then
// VectorAt). It returns nil, and no error, when there is no such
// checkpoint (the look-back reaches before the store's history) or the
// node did not exist at it. It is a helper for the worker, outside
// Evaluate, which does no I/O.
func ReadBaseline(st *storage.Store, node string, at time.Time, lookback time.Duration) ([]uint64, error) {
	seq, ok := st.SeqAtTime(at.Add(-lookback))
	if !ok {
		return nil, nil
	}
	vec, _, _, err := st.VectorAt(node, seq)
	if errors.Is(err, storage.ErrUnknownNode) || errors.Is(err, storage.ErrRetention) {
		return nil, nil
	}
	return vec, err
}
