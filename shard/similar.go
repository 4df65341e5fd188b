package shard

import (
	"context"
	"errors"
	"fmt"
	"math/bits"
	"net/http"
	"runtime"
	"sort"
	"sync"
	"sync/atomic"
	"time"

	"orbitwatch/delta"
	"orbitwatch/delta/gdv"
	"orbitwatch/storage"
)

// SimilarRequest asks for the nodes whose structural signatures are
// nearest to one node's (the GDV distance of gdv.Metric, the one the
// signature alert rule scores).
type SimilarRequest struct {
	Node string
	// K is the most nodes returned (≥ 1); the node itself is never one.
	K int
	// MinDegree leaves out nodes with fewer neighbours at the point read
	// (1 leaves out the nodes whose edges are all gone).
	MinDegree int
	// At and Seq choose a stored cut as in ReadRequest; neither reads the
	// worker's state at the last applied event.
	At  time.Time
	Seq uint64
}

// SimilarReply answers a SimilarRequest.
type SimilarReply struct {
	// Status is an HTTP status code: 200, 404 (unknown node, no cut), 410
	// (before the retained history) or 500; Error says why when not 200.
	Status int
	Error  string
	Node   string
	// Seq and EventTime are the point the signatures were read at: the
	// last applied event, or the cut.
	Seq       uint64
	EventTime time.Time
	// Similar holds the nearest nodes, nearest first (ties by dense id,
	// that is by first appearance in the log).
	Similar []SimilarNode
	// Shard is the shard that answered.
	Shard int
}

// SimilarNode is one node of a SimilarReply.
type SimilarNode struct {
	Node     string
	Distance float64
	Degree   int
	// Orbits are the (at most SimilarOrbits) orbits whose terms of the
	// distance are largest, largest first: where the two differ most.
	Orbits []int
}

// SimilarReader is a View that answers nearest-signature queries; the
// API's similar endpoint needs it.
type SimilarReader interface {
	Similar(ctx context.Context, req SimilarRequest) (SimilarReply, error)
}

// SimilarOrbits is how many differing orbits a SimilarNode names, as many
// as an alert lists by default.
const SimilarOrbits = 5

// Signatures holds the signature of every node at one point of the log in
// a gdv.Index, with the nodes' names and degrees there, for exact
// nearest-signature queries.
type Signatures struct {
	ix        *gdv.Index
	names     []string
	deg       []uint32
	dict      *storage.Dict // nil for LiveSignatures, whose owner resolves names
	seq       uint64
	watermark time.Time
}

func newSignatures(m *gdv.Metric) *Signatures { return &Signatures{ix: gdv.NewIndex(m)} }

// Seq returns the log position the signatures are of.
func (s *Signatures) Seq() uint64 { return s.seq }

// Watermark returns the event-time watermark there.
func (s *Signatures) Watermark() time.Time { return s.watermark }

// Len returns the number of nodes with a signature.
func (s *Signatures) Len() int { return s.ix.Len() }

// SignaturesAt returns the signatures of every node as of st's latest
// complete cut with Seq ≤ seq: the state there loaded whole (StateAt) and
// every vector derived from it on every core. m is the metric of c's
// catalog (nil: gdv.ForCatalog). Cost: one StateAt and one derived vector
// per node.
func SignaturesAt(st *storage.Store, c *Counting, seq uint64, m *gdv.Metric) (*Signatures, error) {
	a, cut, err := StateAt(st, c, seq)
	if err != nil {
		return nil, err
	}
	if m == nil {
		m = gdv.ForCatalog(c.Catalog)
	}
	s := newSignatures(m)
	s.dict, s.seq, s.watermark = a.dict, cut.Seq, cut.Watermark
	if err := s.store(a, nil); err != nil {
		return nil, fmt.Errorf("cut %d: %w", cut.Seq, err)
	}
	return s, nil
}

// Similar answers for node among signatures made by SignaturesAt.
func (s *Signatures) Similar(node string, k, minDegree int) SimilarReply {
	if s.dict == nil {
		panic("shard: Signatures.Similar on live signatures")
	}
	r := SimilarReply{Node: node, Seq: s.seq, EventTime: s.watermark}
	x, ok := s.dict.Lookup(node)
	if !ok {
		r.Status, r.Error = http.StatusNotFound, fmt.Sprintf("unknown node %q at cut %d", node, s.seq)
		return r
	}
	r.Status, r.Similar = http.StatusOK, s.nearest(x, k, minDegree)
	return r
}

// nearest returns the k nodes nearest to node x (which has a signature)
// with at least minDegree neighbours, x excluded.
func (s *Signatures) nearest(x uint32, k, minDegree int) []SimilarNode {
	filter := func(y uint32) bool { return y != x && int(s.deg[y]) >= minDegree }
	got, ok := s.ix.NearestTo(x, k, filter)
	if !ok {
		panic("shard: a node of the dictionary has no signature")
	}
	out := make([]SimilarNode, len(got))
	var terms []float64
	for i, n := range got {
		terms, _ = s.ix.TermsBetween(terms, x, n.Node)
		out[i] = SimilarNode{Node: s.names[n.Node], Distance: n.Distance, Degree: int(s.deg[n.Node]), Orbits: gdv.Largest(terms, SimilarOrbits)}
	}
	return out
}

// store derives the vectors of nodes (nil: every node of a) from a's
// counter and stores their signatures and degrees, on every core. The
// counter and graph are only read: the caller keeps them from changing.
func (s *Signatures) store(a *Applier, nodes []uint32) error {
	n := a.dict.Len()
	s.names = a.dict.From(0)
	s.ix.Grow(n)
	for len(s.deg) < n {
		s.deg = append(s.deg, 0)
	}
	total := n
	if nodes != nil {
		total = len(nodes)
	}
	g, c := a.graph, a.counter
	return eachChunk(total, func() func(lo, hi int) error {
		b := s.ix.NewBatch()
		var vec []uint64
		return func(lo, hi int) error {
			for i := lo; i < hi; i++ {
				x := uint32(i)
				if nodes != nil {
					x = nodes[i]
				}
				var err error
				if vec, err = c.Vector(x, vec); err != nil {
					return err
				}
				b.Set(x, vec)
				s.deg[x] = uint32(g.Degree(x))
			}
			s.ix.Apply(b)
			b.Reset()
			return nil
		}
	})
}

// storeChunk is how many nodes one goroutine derives between two applies
// to the index.
const storeChunk = 4096

// eachChunk splits 0..n−1 into chunks of storeChunk and hands them to one
// worker per core (runtime.GOMAXPROCS), each made by newWorker; the first
// error stops the rest and is returned.
func eachChunk(n int, newWorker func() func(lo, hi int) error) error {
	var next atomic.Int64
	var failed atomic.Bool
	errs := make([]error, max(1, min(runtime.GOMAXPROCS(0), (n+storeChunk-1)/storeChunk)))
	var wg sync.WaitGroup
	for w := range errs {
		do := newWorker()
		wg.Go(func() {
			for !failed.Load() {
				lo := int(next.Add(storeChunk)) - storeChunk
				if lo >= n {
					return
				}
				if err := do(lo, min(lo+storeChunk, n)); err != nil {
					errs[w] = err
					failed.Store(true)
				}
			}
		})
	}
	wg.Wait()
	return errors.Join(errs...)
}

// LiveSignatures keeps the signatures of every node of a running
// Applier exact for queries at its last applied event.
//
// Vectors are derived on read (DESIGN.md §7), so a node's vector changes
// without its own record changing. What stays exact whatever the counter
// keeps: a change of the pair uv changes only the vectors of nodes that a
// connected graphlet of at most k nodes can join to u and v, the nodes
// within distance k−2 of u or v (the halo; 2 for 4-node graphlets, 3 for
// 5). Every pair changed since the last refresh is known (the cuts' pairs,
// which Cut notes, and the applier's pairs not yet cut), so a refresh, at
// the first query after the state moved, walks the halo of those pairs'
// ends in the present graph and derives again the vectors of the nodes it
// reaches. (A walk in the present graph suffices: a path in the old graph
// that uses a removed pair reaches that pair's end sooner.) When the halo
// holds more than half the nodes, as it does on a graph with hubs after
// any change near a hub, every node is derived instead, on every core.
// The first query builds the whole index. See the README for measured
// costs.
//
// The owner's lock: Cut runs under its write lock (in OnCut), Similar
// takes its read lock for the refresh only, so the applier waits for a
// refresh but not for the scan.
type LiveSignatures struct {
	m *gdv.Metric

	mu  sync.Mutex  // one refresh-and-query at a time
	sig *Signatures // nil until the first query; set under mu and the owner's read lock
	// touched marks the ends of pairs changed in cuts since the last
	// refresh: written under the owner's write lock (Cut), read and
	// cleared under mu and the owner's read lock.
	touched []uint64
	last    Refresh
	depth   int // the halo's depth when not 0; tests make it too shallow
}

// Refresh describes the last refresh of a LiveSignatures.
type Refresh struct {
	// Derived is the number of vectors derived again; Full is true when
	// that was every node.
	Derived int
	Full    bool
	// Took is the time the owner's read lock was held.
	Took time.Duration
}

// NewLiveSignatures returns the (empty) live signatures for c's catalog.
func NewLiveSignatures(c *Counting) *LiveSignatures {
	return &LiveSignatures{m: gdv.ForCatalog(c.Catalog)}
}

// Metric returns the metric of the signatures.
func (l *LiveSignatures) Metric() *gdv.Metric { return l.m }

// LastRefresh returns what the last refresh did.
func (l *LiveSignatures) LastRefresh() Refresh {
	l.mu.Lock()
	defer l.mu.Unlock()
	return l.last
}

// Cut notes the pairs whose multiplicity changed at the cut cp. Call it in
// the applier's OnCut, under the owner's write lock. Before the first
// query it does nothing: the first query derives every node.
func (l *LiveSignatures) Cut(cp *storage.Checkpoint) {
	if l.sig == nil {
		return
	}
	for _, e := range cp.Edges {
		l.touched = mark(l.touched, e.U)
		l.touched = mark(l.touched, e.V)
	}
}

func mark(set []uint64, x uint32) []uint64 {
	for int(x/64) >= len(set) {
		set = append(set, 0)
	}
	set[x/64] |= 1 << (x % 64)
	return set
}

// Similar answers req (its At and Seq are not read) at a's last applied
// event: it brings the signatures up to that event under rl, the read
// lock of the owner's lock over a, then scans without it.
func (l *LiveSignatures) Similar(a *Applier, rl sync.Locker, req SimilarRequest) SimilarReply {
	l.mu.Lock()
	defer l.mu.Unlock()
	r := SimilarReply{Node: req.Node}
	rl.Lock()
	x, ok := a.Lookup(req.Node)
	r.Seq, r.EventTime = a.Seq(), a.Watermark()
	var err error
	if ok {
		err = l.refresh(a)
	}
	rl.Unlock()
	switch {
	case !ok:
		r.Status, r.Error = http.StatusNotFound, fmt.Sprintf("unknown node %q at seq %d", req.Node, r.Seq)
	case err != nil:
		r.Status, r.Error = http.StatusInternalServerError, err.Error()
	default:
		r.Status, r.Similar = http.StatusOK, l.sig.nearest(x, req.K, req.MinDegree)
	}
	return r
}

// refresh brings l.sig to a's state; the caller holds mu and the owner's
// read lock. After an error the next refresh derives every node.
func (l *LiveSignatures) refresh(a *Applier) error {
	if l.sig != nil && l.sig.seq == a.Seq() {
		l.last = Refresh{}
		return nil
	}
	start := time.Now()
	var dirty []uint32
	full := l.sig == nil
	if full {
		l.sig = newSignatures(l.m)
	} else {
		seeds := l.touched
		for _, p := range a.pairs {
			seeds = mark(seeds, p[0])
			seeds = mark(seeds, p[1])
		}
		l.touched = seeds
		depth := a.count.Catalog.MaxNodes - 2
		if l.depth != 0 {
			depth = l.depth
		}
		dirty = halo(a.graph, seeds, depth, a.dict.Len()/2)
		full = dirty == nil
	}
	clear(l.touched)
	if full {
		dirty = nil
	} else if len(dirty) == 0 {
		dirty = []uint32{} // no pair changed: nothing to derive
	}
	if err := l.sig.store(a, dirty); err != nil {
		l.sig = nil
		return err
	}
	l.sig.seq, l.sig.watermark = a.Seq(), a.Watermark()
	l.last = Refresh{Derived: len(dirty), Full: full, Took: time.Since(start)}
	if full {
		l.last.Derived = a.dict.Len()
	}
	return nil
}

// halo returns the nodes within distance depth of a node marked in seeds,
// in g, or nil when there are more than limit of them.
func halo(g *delta.Graph, seeds []uint64, depth, limit int) []uint32 {
	seen := make([]uint64, (g.NumNodes()+63)/64)
	var out []uint32
	for w, word := range seeds {
		for ; word != 0; word &= word - 1 {
			x := uint32(w*64 + bits.TrailingZeros64(word))
			if int(x) < g.NumNodes() && seen[x/64]&(1<<(x%64)) == 0 {
				seen[x/64] |= 1 << (x % 64)
				out = append(out, x)
			}
		}
	}
	for from := 0; depth > 0; depth-- {
		to := len(out)
		for _, x := range out[from:to] {
			it := g.Neighbors(x).Iterator()
			for it.HasNext() {
				y := it.Next()
				if seen[y/64]&(1<<(y%64)) == 0 {
					seen[y/64] |= 1 << (y % 64)
					out = append(out, y)
				}
			}
			if len(out) > limit {
				return nil
			}
		}
		from = to
	}
	if len(out) > limit {
		return nil
	}
	return out
}

// StoredSignatures answers as-of queries from a store, keeping the
// signatures of the last cut asked for (8 bytes per node and orbit, as
// the live index).
type StoredSignatures struct {
	st *storage.Store
	c  *Counting
	m  *gdv.Metric

	mu  sync.Mutex
	sig *Signatures
}

// NewStoredSignatures returns as-of signatures over st, of c's kind, with
// metric m (nil: gdv.ForCatalog).
func NewStoredSignatures(st *storage.Store, c *Counting, m *gdv.Metric) *StoredSignatures {
	if m == nil {
		m = gdv.ForCatalog(c.Catalog)
	}
	return &StoredSignatures{st: st, c: c, m: m}
}

// Similar answers req as of the stored cut its At or Seq names.
func (s *StoredSignatures) Similar(req SimilarRequest) SimilarReply {
	seq, status, msg := CutFor(s.st, req.At, req.Seq)
	if status != http.StatusOK {
		return SimilarReply{Node: req.Node, Status: status, Error: msg}
	}
	cut, err := CheckpointAt(s.st, seq)
	if err != nil {
		status, msg := StoredError(s.st, seq, err)
		return SimilarReply{Node: req.Node, Status: status, Error: msg}
	}
	s.mu.Lock()
	defer s.mu.Unlock()
	if s.sig == nil || s.sig.seq != cut.Seq {
		s.sig = nil // let the old index go before the new one is made
		sig, err := SignaturesAt(s.st, s.c, cut.Seq, s.m)
		if err != nil {
			status, msg := StoredError(s.st, seq, err)
			return SimilarReply{Node: req.Node, Status: status, Error: msg}
		}
		s.sig = sig
	}
	return s.sig.Similar(req.Node, req.K, req.MinDegree)
}

// CheckpointAt returns st's latest complete checkpoint with Seq ≤ seq,
// or an error wrapping storage.ErrNoCheckpoint or storage.ErrRetention.
func CheckpointAt(st *storage.Store, seq uint64) (storage.CheckpointInfo, error) {
	cps := st.Checkpoints()
	i := sort.Search(len(cps), func(i int) bool { return cps[i].Seq > seq }) - 1
	switch {
	case i >= 0:
		return cps[i], nil
	case st.Floor() > 0:
		return storage.CheckpointInfo{}, fmt.Errorf("read at %d: %w", seq, storage.ErrRetention)
	}
	return storage.CheckpointInfo{}, fmt.Errorf("read at %d: %w", seq, storage.ErrNoCheckpoint)
}

// StoredError turns an error of reading st as of seq into a status and a
// reason: 404 for no cut, 410 for a cut before the retained history, else
// 500 with the error's own words.
func StoredError(st *storage.Store, seq uint64, err error) (int, string) {
	switch {
	case errors.Is(err, storage.ErrNoCheckpoint):
		return http.StatusNotFound, fmt.Sprintf("no complete cut at or before seq %d", seq)
	case errors.Is(err, storage.ErrRetention):
		return http.StatusGone, fmt.Sprintf("seq %d is before the retained history (floor %d)", seq, st.Floor())
	}
	return http.StatusInternalServerError, err.Error()
}

// Similar answers a nearest-signature query: without At or Seq from the
// worker's state at the last applied event (LiveSignatures), else as of a
// stored cut (StoredSignatures).
func (w *Worker) Similar(ctx context.Context, req SimilarRequest) (SimilarReply, error) {
	var r SimilarReply
	if req.At.IsZero() && req.Seq == 0 {
		r = w.similar.Similar(w.a, w.mu.RLocker(), req)
	} else {
		r = w.stored.Similar(req)
	}
	r.Shard = w.cfg.Shard
	return r, ctx.Err()
}

// LiveSignatures returns the worker's live signatures (for measuring
// their refreshes).
func (w *Worker) LiveSignatures() *LiveSignatures { return w.similar }

var _ SimilarReader = (*Worker)(nil)
