package bench

import (
	"runtime"
	"time"

	"orbitwatch/bench/gen"
	"orbitwatch/delta"
	"orbitwatch/shard"
	"orbitwatch/storage"
	"orbitwatch/stream"
)

// StateBytes is the heap the product's in-memory state takes for one
// graph, split by part: what a worker or backfill holds besides Badger's
// tables and caches. Each part is the growth of the Go heap after a full
// collection (HeapInuse: spans in use, so slack in them counts; Live:
// HeapAlloc, the bytes of live objects) while that part alone is built
// from the log.
type StateBytes struct {
	Nodes, Edges int
	// Graph is the applier's multigraph (Roaring bitmaps of neighbours and
	// the multiplicities above one); Dict the node dictionary (names and
	// their map); Counter the counter's records and its own sorted
	// adjacency with each edge's triangle count (delta/factored); Total the
	// whole applier, the three together.
	Graph, Dict, Counter, Total Heap
}

// Heap is one part's heap growth.
type Heap struct{ InUse, Live int64 }

func (h Heap) sub(o Heap) Heap { return Heap{h.InUse - o.InUse, h.Live - o.Live} }

// heapNow collects garbage (twice, so that finalised objects go too) and
// returns the heap in use and live.
func heapNow() Heap {
	runtime.GC()
	runtime.GC()
	var m runtime.MemStats
	runtime.ReadMemStats(&m)
	return Heap{int64(m.HeapInuse), int64(m.HeapAlloc)}
}

// MeasureState builds, one after another, the node dictionary, an applier
// keeping the graph alone, and the product's applier (undirected 2–4
// nodes), each from the log of edges added one second apart with names
// made afresh for every event as a decoder makes them, and returns the
// heap each took. The counter's share is the full applier less the
// graph-only one.
func MeasureState(edges []gen.Edge, name gen.Namer) (StateBytes, error) {
	c, err := shard.NewCounting(delta.Undirected, 4)
	if err != nil {
		return StateBytes{}, err
	}
	s := StateBytes{Nodes: gen.MaxNode(edges), Edges: len(edges)}
	var buf []byte
	h0 := heapNow()
	d := storage.NewDict()
	for _, e := range edges {
		buf = name(buf[:0], e.U)
		d.InternBytes(buf)
		buf = name(buf[:0], e.V)
		d.InternBytes(buf)
	}
	h1 := heapNow()
	s.Dict = h1.sub(h0)
	graphOnly, err := applyAll(&shard.Counting{Catalog: c.Catalog, Recount: c.Recount}, edges, name)
	if err != nil {
		return s, err
	}
	h2 := heapNow()
	full, err := applyAll(c, edges, name)
	if err != nil {
		return s, err
	}
	h3 := heapNow()
	s.Graph = h2.sub(h1).sub(s.Dict)
	s.Total = h3.sub(h2)
	s.Counter = s.Total.sub(h2.sub(h1))
	runtime.KeepAlive(d)
	runtime.KeepAlive(graphOnly)
	runtime.KeepAlive(full)
	return s, nil
}

// applyAll applies edges as adds to a new applier of c with hourly cuts
// (taken and dropped, as a committer would after writing them).
func applyAll(c *shard.Counting, edges []gen.Edge, name gen.Namer) (*shard.Applier, error) {
	a := shard.NewApplier(c, 0, shard.Cuts{Every: shard.DefaultCutEvery})
	t := time.Date(2026, 1, 1, 0, 0, 0, 0, time.UTC).Unix()
	var buf []byte
	for i, e := range edges {
		buf = name(buf[:0], e.U)
		src := string(buf)
		buf = name(buf[:0], e.V)
		if err := a.Apply(uint64(i+1), stream.Event{TS: time.Unix(t+int64(i), 0).UTC(), HasTS: true, Op: stream.OpAdd, Src: src, Dst: string(buf)}); err != nil {
			return nil, err
		}
	}
	return a, a.Cut()
}
