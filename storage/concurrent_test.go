package storage

import (
	"slices"
	"sync"
	"sync/atomic"
	"testing"

	"orbitwatch/delta"
)

// TestReadsDuringCommit: readers running while checkpoints are committed
// see, at whatever cut they get, exactly that checkpoint's vectors, never a
// mix of two.
func TestReadsDuringCommit(t *testing.T) {
	st := mustOpen(t, t.TempDir(), undirected4)
	defer st.Close()
	m := newModel(delta.Undirected, 15, 9, 2000)
	var snaps sync.Map // seq → *snapshot
	var done atomic.Bool
	var checked atomic.Int64
	var wg sync.WaitGroup
	errs := make(chan string, 4)
	for r := range 2 {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := r; !done.Load(); i += 13 {
				seq := st.Seq()
				if seq == 0 {
					continue
				}
				v, _ := snaps.Load(seq)
				sn := v.(*snapshot)
				// Names only grow, so node x keeps its number at later cuts.
				x := i % len(sn.names)
				src, err := st.SourceAt(^uint64(0))
				if err != nil {
					errs <- err.Error()
					return
				}
				vec := make([]uint64, 15)
				b, err := src.Record(uint32(x))
				if err == nil {
					err = delta.DecodeCounts(b, vec)
				}
				cut := src.Checkpoint().Seq
				src.Close()
				if err != nil {
					errs <- err.Error()
					return
				}
				v, _ = snaps.Load(cut)
				if !slices.Equal(vec, v.(*snapshot).vec.Row(uint32(x))) {
					errs <- "a read mixed checkpoints"
					return
				}
				checked.Add(1)
			}
		}()
	}
	for i := 1; i <= 20; i++ {
		m.run(uint64(i) * 3000)
		snaps.Store(m.seq, &snapshot{m.seq, m.watermark(), names(m.dict), m.vec.Clone(), nil})
		if err := st.Commit(m.checkpoint()); err != nil {
			t.Fatal(err)
		}
	}
	done.Store(true)
	wg.Wait()
	close(errs)
	for e := range errs {
		t.Fatal(e)
	}
	if checked.Load() == 0 {
		t.Fatal("no read overlapped the commits")
	}
	t.Logf("%d reads checked during 20 commits", checked.Load())
}
