package shard

import (
	"errors"
	"fmt"
	"time"

	"orbitwatch/delta"
	"orbitwatch/storage"
)

// Restore returns an applier that continues from a stored checkpoint: its
// graph, dictionary, log position, watermark and pending window expiries,
// and a counter restored from the records src reads at the same
// checkpoint (nil src: the graph alone, for commands that recount).
func Restore(c *Counting, win time.Duration, cuts Cuts, st *storage.State, src delta.Source) (*Applier, error) {
	a := NewApplier(c, win, cuts)
	a.graph, a.dict = st.Graph, st.Dict
	a.graph.Grow(a.dict.Len())
	a.seq, a.lastCut, a.watermark, a.named = st.Seq, st.Seq, st.Watermark, a.dict.Len()
	if len(st.Keyed) > 0 {
		if a.window == nil {
			return nil, errors.New("stored state has pending window expiries but no window is set")
		}
		if err := a.window.load(st.Keyed); err != nil {
			return nil, fmt.Errorf("stored window expiries: %w", err)
		}
	}
	if a.counter == nil || src == nil {
		a.counter = nil
		return a, nil
	}
	if err := a.counter.Restore(a.graph, src); err != nil {
		return nil, fmt.Errorf("restoring the counter from checkpoint %d: %w", st.Seq, err)
	}
	return a, nil
}
