package gdv

import (
	"math"
	"runtime"
	"slices"
	"sync"
	"sync/atomic"
)

// Index answers exact nearest-signature queries by scanning every node's
// signature. The signatures of all nodes lie in one contiguous []float32,
// node x at [x·2n, (x+1)·2n) with its L_i and W_i interleaved (see
// Metric.Signature), so the distance to a node is one pass over adjacent
// memory and a query streams the array front to back. Rows of nodes never
// Set are skipped.
//
// Memory: 8 bytes per node and orbit (120 B per node for 15 orbits, 584 B
// for 73).
//
// Set and Nearest may be called from different goroutines: Set takes a
// write lock and a query a read lock, so a query sees every Set before it
// or none of one.
type Index struct {
	m *Metric

	mu   sync.RWMutex
	data []float32
	set  []uint64 // bit x: node x has a row
	rows int      // node ids 0..rows−1 have space
	n    int      // nodes with a row
}

// Neighbor is one node of a nearest-signature result and its distance D.
type Neighbor struct {
	Node     uint32
	Distance float64
}

// NewIndex returns an empty Index of signatures under m. Queries scan
// with runtime.GOMAXPROCS goroutines.
func NewIndex(m *Metric) *Index { return &Index{m: m} }

func numWorkers() int { return max(1, runtime.GOMAXPROCS(0)) }

// Metric returns the Metric the Index was made with.
func (ix *Index) Metric() *Metric { return ix.m }

// Len returns the number of nodes that have a signature.
func (ix *Index) Len() int {
	ix.mu.RLock()
	defer ix.mu.RUnlock()
	return ix.n
}

// Grow makes room for node ids 0..n−1 without giving them signatures, so
// a bulk load does not copy the array as it grows.
func (ix *Index) Grow(n int) {
	ix.mu.Lock()
	defer ix.mu.Unlock()
	ix.grow(n)
}

func (ix *Index) grow(n int) {
	if n <= ix.rows {
		return
	}
	ix.data = slices.Grow(ix.data, n*ix.m.SignatureLen()-len(ix.data))[:n*ix.m.SignatureLen()]
	words := (n + 63) / 64
	ix.set = slices.Grow(ix.set, words-len(ix.set))[:words]
	ix.rows = n
}

// Set stores (or replaces) node's signature from its count vector v, which
// must have the Metric's orbit count.
func (ix *Index) Set(node uint32, v []uint64) {
	if len(v) != ix.m.NumOrbits() {
		panic("gdv: Index.Set of a vector whose length differs from the orbit count")
	}
	ix.mu.Lock()
	defer ix.mu.Unlock()
	if int(node) >= ix.rows {
		ix.grow(max(int(node)+1, ix.rows+ix.rows/2))
	}
	s := ix.m.SignatureLen()
	ix.m.Signature(ix.data[int(node)*s:int(node+1)*s], v)
	ix.mark(node)
}

// Batch holds signatures made outside an Index's lock, for Apply to copy
// in under one write lock: a cut computes the logarithms of its changed
// nodes while queries go on, and holds them up only for the copy.
type Batch struct {
	m     *Metric
	nodes []uint32
	sigs  []float32
}

// NewBatch returns an empty Batch for ix.
func (ix *Index) NewBatch() *Batch { return &Batch{m: ix.m} }

// Set adds node's new count vector v (the Metric's orbit count long).
func (b *Batch) Set(node uint32, v []uint64) {
	if len(v) != b.m.NumOrbits() {
		panic("gdv: Batch.Set of a vector whose length differs from the orbit count")
	}
	n := len(b.sigs)
	b.sigs = slices.Grow(b.sigs, b.m.SignatureLen())[:n+b.m.SignatureLen()]
	b.m.Signature(b.sigs[n:], v)
	b.nodes = append(b.nodes, node)
}

// Len returns the number of vectors in the Batch.
func (b *Batch) Len() int { return len(b.nodes) }

// Reset empties the Batch, keeping its memory.
func (b *Batch) Reset() { b.nodes, b.sigs = b.nodes[:0], b.sigs[:0] }

// Apply stores every vector of b, in b's order (a node set twice keeps its
// last), as Set would. b must come from an Index of the same Metric.
func (ix *Index) Apply(b *Batch) {
	if b.m != ix.m {
		panic("gdv: Apply of a Batch made for another Metric")
	}
	if len(b.nodes) == 0 {
		return
	}
	ix.mu.Lock()
	defer ix.mu.Unlock()
	if top := int(slices.Max(b.nodes)); top >= ix.rows {
		ix.grow(max(top+1, ix.rows+ix.rows/2))
	}
	s := ix.m.SignatureLen()
	for i, x := range b.nodes {
		copy(ix.data[int(x)*s:int(x+1)*s], b.sigs[i*s:(i+1)*s])
		ix.mark(x)
	}
}

// mark records that x has a row.
func (ix *Index) mark(x uint32) {
	if w, bit := x/64, uint64(1)<<(x%64); ix.set[w]&bit == 0 {
		ix.set[w] |= bit
		ix.n++
	}
}

// Terms returns the per-orbit terms of D between the count vector v and
// node's stored signature (see Metric.Distance), in dst if it is long
// enough, and false if node has no signature. With Largest they name the
// orbits that differ most.
func (ix *Index) Terms(dst []float64, v []uint64, node uint32) ([]float64, bool) {
	q := ix.m.Signature(nil, v)
	if cap(dst) < len(v) {
		dst = make([]float64, len(v))
	}
	dst = dst[:len(v)]
	ix.mu.RLock()
	defer ix.mu.RUnlock()
	if !ix.has(node) {
		return dst, false
	}
	s := ix.m.SignatureLen()
	ix.m.Distance(q, ix.data[int(node)*s:int(node+1)*s], dst)
	return dst, true
}

func (ix *Index) has(x uint32) bool {
	return int(x) < ix.rows && ix.set[x/64]&(1<<(x%64)) != 0
}

// chunk is how many rows one goroutine takes at a time: large enough that
// taking one costs nothing next to scanning it, small enough that a core
// slowed by other work on the machine leaves the rest to the other.
const chunk = 8192

// Nearest returns the k nodes whose signatures are nearest to the count
// vector v, by D and then by node id, nearest first: exactly the first k
// of all nodes with a signature, sorted by (D, id), for which filter (nil:
// all) returns true. Fewer come back when fewer pass. The query node, if
// it has a signature, is excluded by the caller's filter.
//
// filter is called only for nodes that would otherwise enter the result
// so far, from several goroutines at once; it must be safe for that and
// must not call the Index's Set.
func (ix *Index) Nearest(v []uint64, k int, filter func(node uint32) bool) []Neighbor {
	if k <= 0 {
		return nil
	}
	q := ix.m.Signature(nil, v)
	ix.mu.RLock()
	defer ix.mu.RUnlock()
	return ix.nearest(q, k, filter)
}

// NearestTo is Nearest with node's stored signature as the query, read
// under the same lock as the scan, so the query and the rows are of one
// moment; false when node has no signature. It is what a query by node
// needs when the node's counts are not at hand (an index built at a cut
// the caller's state has moved past).
func (ix *Index) NearestTo(node uint32, k int, filter func(node uint32) bool) ([]Neighbor, bool) {
	ix.mu.RLock()
	defer ix.mu.RUnlock()
	if !ix.has(node) {
		return nil, false
	}
	if k <= 0 {
		return nil, true
	}
	s := ix.m.SignatureLen()
	q := slices.Clone(ix.data[int(node)*s : int(node+1)*s])
	return ix.nearest(q, k, filter), true
}

// TermsBetween is Terms with both sides stored: the per-orbit terms of D
// between the signatures of nodes a and b, in dst if it is long enough;
// false when either has none.
func (ix *Index) TermsBetween(dst []float64, a, b uint32) ([]float64, bool) {
	n := ix.m.NumOrbits()
	if cap(dst) < n {
		dst = make([]float64, n)
	}
	dst = dst[:n]
	ix.mu.RLock()
	defer ix.mu.RUnlock()
	if !ix.has(a) || !ix.has(b) {
		return dst, false
	}
	s := ix.m.SignatureLen()
	ix.m.Distance(ix.data[int(a)*s:int(a+1)*s], ix.data[int(b)*s:int(b+1)*s], dst)
	return dst, true
}

// nearest is Nearest's scan of signature q; the caller holds the read
// lock.
func (ix *Index) nearest(q []float32, k int, filter func(node uint32) bool) []Neighbor {
	workers := min(numWorkers(), (ix.rows+chunk-1)/chunk)
	heaps := make([]topK, max(workers, 1))
	var next atomic.Int64
	scan := func(h *topK) {
		h.k = k
		for {
			lo := int(next.Add(chunk)) - chunk
			if lo >= ix.rows {
				return
			}
			ix.scan(h, q, lo, min(lo+chunk, ix.rows), filter)
		}
	}
	var wg sync.WaitGroup
	for w := 1; w < workers; w++ {
		wg.Go(func() { scan(&heaps[w]) })
	}
	scan(&heaps[0])
	wg.Wait()
	var all []Neighbor
	for _, h := range heaps {
		all = append(all, h.items...)
	}
	slices.SortFunc(all, compare)
	return all[:min(k, len(all))]
}

// scan offers nodes lo..hi−1 to h.
func (ix *Index) scan(h *topK, q []float32, lo, hi int, filter func(uint32) bool) {
	s := len(q)
	data := ix.data[lo*s : hi*s]
	limit := math.Inf(1)
	if h.full() {
		limit = h.items[0].Distance
	}
	for x := lo; x < hi; x++ {
		row := data[:s:s]
		data = data[s:]
		d := sum(q, row, limit)
		if d > limit {
			continue
		}
		c := Neighbor{Node: uint32(x), Distance: d}
		if h.full() && compare(c, h.items[0]) >= 0 {
			continue
		}
		if !ix.has(c.Node) || filter != nil && !filter(c.Node) {
			continue
		}
		h.push(c)
		if h.full() {
			limit = h.items[0].Distance
		}
	}
}

// compare orders neighbours by distance, then node id.
func compare(a, b Neighbor) int {
	switch {
	case a.Distance < b.Distance:
		return -1
	case a.Distance > b.Distance:
		return 1
	case a.Node < b.Node:
		return -1
	case a.Node > b.Node:
		return 1
	}
	return 0
}

// topK keeps the k least neighbours seen, as a max-heap: items[0] is the
// greatest of them.
type topK struct {
	k     int
	items []Neighbor
}

func (h *topK) full() bool { return len(h.items) >= h.k }

// push adds c; when full, c must be less than items[0], which it replaces.
func (h *topK) push(c Neighbor) {
	if !h.full() {
		h.items = append(h.items, c)
		for i := len(h.items) - 1; i > 0; {
			p := (i - 1) / 2
			if compare(h.items[i], h.items[p]) <= 0 {
				break
			}
			h.items[i], h.items[p] = h.items[p], h.items[i]
			i = p
		}
		return
	}
	h.items[0] = c
	for i := 0; ; {
		l, big := 2*i+1, i
		if l < len(h.items) && compare(h.items[l], h.items[big]) > 0 {
			big = l
		}
		if r := l + 1; r < len(h.items) && compare(h.items[r], h.items[big]) > 0 {
			big = r
		}
		if big == i {
			return
		}
		h.items[i], h.items[big] = h.items[big], h.items[i]
		i = big
	}
}
