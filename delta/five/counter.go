package five

import (
	"fmt"
	"sync"

	"orbitwatch/delta"
)

// Counter is the incremental undirected 2–5 counter of the record
// interface (delta.Counter). Its record is a node's 73-orbit vector, and
// the vectors are brought up to date by the combinatorial recount of the
// whole graph the first time they are read after a change (a cut's
// Changed, a Vector, an AppendRecord), not per event: Insert and Delete
// only apply the edge to the counter's own copy of the graph.
//
// Why not per-event updates (bench/cmd/fivebench, BA(20k, m=5), 100k
// edges): a 5-node orbit changes up to three hops from the edge, which
// through a hub is most of the graph, so the eager engine
// (delta.NewEager(generic.NewEngine(cat))) spends about 27 ms per event
// (≈37 events/s), while one recount takes about 0.6 s and an event
// between cuts about 1.2 µs. Recounting at each cut is ahead for every
// cut of more than a few dozen events and reaches 2,000 events/s for
// cuts of about 1,000 events on that graph (in general about 2,000 ×
// the recount's seconds). Changed still names every node whose vector
// moved, which through hubs is most nodes. A factored record
// (non-induced pattern counts kept per node, vectors derived on read as
// delta/factored does for four nodes) needs 3-hop sums on read and is
// not built.
//
// Reads serialise on a mutex when they trigger the recount; concurrent
// reads of fresh vectors do not wait on one another beyond it.
type Counter struct {
	mu    sync.Mutex
	g     *delta.Graph // the counter's own copy of the simple graph
	vec   *delta.Vectors
	dirty bool
	fault error
	// changed is a bitset of nodes whose vector changed in a recount
	// since the last Changed.
	changed delta.Bits
	opt     Options
}

// NewCounter returns an empty Counter; opt tunes its recounts.
func NewCounter(opt Options) *Counter {
	return &Counter{g: delta.NewGraph(delta.Undirected), vec: delta.NewVectors(0, numOrbits), opt: opt}
}

// New returns NewCounter(Options{}) as a delta.Counter, the constructor
// the applier calls for undirected 2–5 counting.
func New() delta.Counter { return NewCounter(Options{}) }

func (c *Counter) Kind() delta.Kind { return delta.Undirected }
func (c *Counter) MaxNodes() int    { return 5 }
func (c *Counter) NumOrbits() int   { return numOrbits }

// Insert applies uv to the counter's graph. After a recount overflowed
// it returns that error.
func (c *Counter) Insert(g *delta.Graph, u, v uint32, neg bool) error {
	if c.fault != nil {
		return c.fault
	}
	c.g.Grow(g.NumNodes())
	if _, err := c.g.Increment(u, v); err != nil {
		return fmt.Errorf("five: insert %d-%d: %w", u, v, err)
	}
	c.dirty = true
	return nil
}

// Delete removes uv from the counter's graph.
func (c *Counter) Delete(g *delta.Graph, u, v uint32) error {
	if c.fault != nil {
		return c.fault
	}
	c.g.Grow(g.NumNodes())
	if _, err := c.g.Decrement(u, v); err != nil {
		return fmt.Errorf("five: delete %d-%d: %w", u, v, err)
	}
	c.dirty = true
	return nil
}

// fresh recounts when the graph changed since the last recount, and
// marks the nodes whose vectors differ. A recount that overflows leaves
// the last vectors in place and the error as the counter's fault, which
// Vector, Insert and Delete return from then on.
func (c *Counter) fresh() error {
	c.mu.Lock()
	defer c.mu.Unlock()
	if c.fault != nil {
		return c.fault
	}
	if !c.dirty && c.vec.NumNodes() == c.g.NumNodes() {
		return nil
	}
	next, err := NewRecounter(c.opt).Count(c.g)
	if err != nil {
		c.fault = err
		return err
	}
	n := next.NumNodes()
	c.changed.Grow(n)
	old := c.vec
	for x := range uint32(n) {
		if int(x) >= old.NumNodes() || !equalRows(old.Row(x), next.Row(x)) {
			c.changed.Set(x)
		}
	}
	c.vec, c.dirty = next, false
	return nil
}

func equalRows(a, b []uint64) bool {
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

// Vector returns x's vector, recounting first when the graph changed.
// The error is ErrOverflow.
func (c *Counter) Vector(x uint32, dst []uint64) ([]uint64, error) {
	if err := c.fresh(); err != nil {
		return nil, err
	}
	dst = append(dst[:0], make([]uint64, numOrbits)...)
	if int(x) < c.vec.NumNodes() {
		copy(dst, c.vec.Row(x))
	}
	return dst, nil
}

// Changed recounts when the graph changed and visits the nodes whose
// vectors differ. After an overflow it visits the nodes of the recounts
// before it (the caller learns of the fault from Insert, Delete or
// Vector).
func (c *Counter) Changed(visit func(x uint32)) {
	_ = c.fresh()
	c.changed.Drain(visit)
}

// AppendRecord appends x's vector as uvarints (delta.AppendCounts).
func (c *Counter) AppendRecord(dst []byte, x uint32) []byte {
	_ = c.fresh()
	if int(x) >= c.vec.NumNodes() {
		return dst
	}
	return delta.AppendCounts(dst, c.vec.Row(x))
}

// Restore takes g's adjacency and the stored vectors. The records are
// trusted as stored (a recount to check them would cost what the next
// cut costs); one that does not decode is an error.
func (c *Counter) Restore(g *delta.Graph, src delta.Source) error {
	c.mu.Lock()
	defer c.mu.Unlock()
	// The counter's graph is simple: multiplicities are the applier's.
	own := delta.NewGraph(delta.Undirected)
	own.Grow(g.NumNodes())
	var err error
	g.ForEachEdge(func(u, v uint32, _ uint32) {
		if _, e := own.Increment(u, v); e != nil && err == nil {
			err = e
		}
	})
	if err != nil {
		return fmt.Errorf("five: restore: %w", err)
	}
	vec := delta.NewVectors(g.NumNodes(), numOrbits)
	for x := range uint32(g.NumNodes()) {
		b, err := src.Record(x)
		if err != nil {
			return err
		}
		if err := delta.DecodeCounts(b, vec.Row(x)); err != nil {
			return fmt.Errorf("five: record of node %d: %w", x, err)
		}
	}
	c.g, c.vec, c.dirty, c.fault = own, vec, false, nil
	c.changed = make([]uint64, (g.NumNodes()+63)/64)
	return nil
}

func (c *Counter) Derive(src delta.Source, x uint32, dst []uint64) ([]uint64, error) {
	dst = append(dst[:0], make([]uint64, numOrbits)...)
	b, err := src.Record(x)
	if err != nil {
		return nil, err
	}
	if err := delta.DecodeCounts(b, dst); err != nil {
		return nil, fmt.Errorf("five: record of node %d: %w", x, err)
	}
	return dst, nil
}
