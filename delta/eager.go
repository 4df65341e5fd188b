package delta

import (
	"encoding/binary"
	"fmt"
)

// eager is the Counter of a kind with no factored form: its record is the
// node's orbit vector, kept current by an Engine that emits every change.
// Every node in an event's halo is changed, so writes and alert scoring
// cost what the eager engine emits (DESIGN.md §7).
type eager struct {
	e       Engine
	signed  SignedEngine // e, when it counts a Signed graph
	vec     *Vectors
	emit    Emit
	fault   error
	changed Bits // bitset of nodes whose vector changed since Changed
}

// NewEager returns the Counter that keeps every node's orbit vector as its
// record, updated by e. An engine of the Signed kind must be a
// SignedEngine.
func NewEager(e Engine) Counter {
	c := &eager{e: e, vec: NewVectors(0, e.NumOrbits())}
	if e.Kind() == Signed {
		se, ok := e.(SignedEngine)
		if !ok {
			panic("delta: NewEager of a Signed engine that cannot insert a negative edge")
		}
		c.signed = se
	}
	c.emit = c.add
	return c
}

func (c *eager) Kind() Kind     { return c.e.Kind() }
func (c *eager) MaxNodes() int  { return c.e.MaxNodes() }
func (c *eager) NumOrbits() int { return c.e.NumOrbits() }

func (c *eager) add(x uint32, o int, d int64) {
	if c.fault != nil {
		return
	}
	if err := c.vec.Add(x, o, d); err != nil {
		c.fault = err
		return
	}
	c.changed.Set(x)
}

func (c *eager) grow(n int) {
	c.vec.Grow(n)
	c.changed.Grow(n)
}

func (c *eager) Insert(g *Graph, u, v uint32, neg bool) error {
	c.grow(g.NumNodes())
	if c.signed != nil {
		c.signed.InsertSigned(g, u, v, neg, c.emit)
	} else {
		c.e.Insert(g, u, v, c.emit)
	}
	return c.fault
}

func (c *eager) Delete(g *Graph, u, v uint32) error {
	c.grow(g.NumNodes())
	c.e.Delete(g, u, v, c.emit)
	return c.fault
}

func (c *eager) Vector(x uint32, dst []uint64) ([]uint64, error) {
	dst = append(dst[:0], make([]uint64, c.vec.NumOrbits())...)
	if int(x) < c.vec.NumNodes() {
		copy(dst, c.vec.Row(x))
	}
	return dst, nil
}

func (c *eager) Changed(visit func(x uint32)) {
	c.changed.Drain(visit)
}

func (c *eager) AppendRecord(dst []byte, x uint32) []byte {
	if int(x) >= c.vec.NumNodes() {
		return dst
	}
	return AppendCounts(dst, c.vec.Row(x))
}

func (c *eager) Restore(g *Graph, src Source) error {
	c.vec = NewVectors(0, c.e.NumOrbits())
	c.changed = nil
	c.fault = nil
	c.grow(g.NumNodes())
	for x := range uint32(g.NumNodes()) {
		b, err := src.Record(x)
		if err != nil {
			return err
		}
		if err := DecodeCounts(b, c.vec.Row(x)); err != nil {
			return fmt.Errorf("record of node %d: %w", x, err)
		}
	}
	clear(c.changed)
	return nil
}

func (c *eager) Derive(src Source, x uint32, dst []uint64) ([]uint64, error) {
	dst = append(dst[:0], make([]uint64, c.vec.NumOrbits())...)
	b, err := src.Record(x)
	if err != nil {
		return nil, err
	}
	if err := DecodeCounts(b, dst); err != nil {
		return nil, fmt.Errorf("record of node %d: %w", x, err)
	}
	return dst, nil
}

// AppendCounts appends counts as uvarints with trailing zeros dropped, so
// an all-zero row appends nothing.
func AppendCounts(dst []byte, counts []uint64) []byte {
	n := len(counts)
	for n > 0 && counts[n-1] == 0 {
		n--
	}
	for _, c := range counts[:n] {
		dst = binary.AppendUvarint(dst, c)
	}
	return dst
}

// DecodeCounts fills counts from b written by AppendCounts; counts past
// the end of b are zero. More values than counts, or a bad uvarint, is an
// error.
func DecodeCounts(b []byte, counts []uint64) error {
	i := 0
	for len(b) > 0 {
		if i == len(counts) {
			return fmt.Errorf("more than %d counts", len(counts))
		}
		c, n := binary.Uvarint(b)
		if n <= 0 {
			return fmt.Errorf("count %d is not a valid uvarint", i)
		}
		counts[i] = c
		b = b[n:]
		i++
	}
	clear(counts[i:])
	return nil
}
