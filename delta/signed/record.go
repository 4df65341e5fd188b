package signed

import (
	"encoding/binary"
	"errors"
	"fmt"

	"orbitwatch/delta"
)

// A node's record, as stored, is a run of uvarints with trailing zeros
// dropped (delta.AppendCounts):
//
//	d+, d−, then the triangles tri[m][s] for m = 0, 1, 2 and s = +, −
//	(m negative ties at the node, the facing tie of sign s)
//	a heavy node (d+ + d− ≥ θ) adds s[+][+], s[+][−], s[−][+], s[−][−],
//	its whole neighbour sums
//
// Whether a node is heavy follows from its degree and the threshold, so
// the record needs no flag, and an isolated node's record is empty.
const recordLen = 2 + 6 + 4

// maxCount bounds a stored count, so that a corrupt record cannot
// overflow the sums of a read.
const maxCount = 1 << 62

// AppendRecord appends x's record.
func (c *Counter) AppendRecord(dst []byte, x uint32) []byte {
	if int(x) >= len(c.nodes) {
		return dst
	}
	var r [recordLen]uint64
	n := &c.nodes[x]
	r[0], r[1] = uint64(n.d[0]), uint64(n.d[1])
	for m := range 3 {
		r[2+2*m], r[3+2*m] = uint64(n.tri[m][0]), uint64(n.tri[m][1])
	}
	if c.heavy[x] {
		q := c.gather(x)
		r[8], r[9], r[10], r[11] = uint64(q.s[0][0]), uint64(q.s[0][1]), uint64(q.s[1][0]), uint64(q.s[1][1])
	}
	return delta.AppendCounts(dst, r[:])
}

// decode reads a record into q; heavy reports whether it carries the
// neighbour sums.
func (c *Counter) decode(b []byte, q *local) (heavy bool, err error) {
	var r [recordLen]uint64
	if err := delta.DecodeCounts(b, r[:]); err != nil {
		return false, err
	}
	for i, v := range r {
		if v > maxCount {
			return false, fmt.Errorf("count %d is %d, above 2^62", i, v)
		}
	}
	q.d = [2]int64{int64(r[0]), int64(r[1])}
	for m := range 3 {
		q.tri[m] = [2]int64{int64(r[2+2*m]), int64(r[3+2*m])}
	}
	q.s = [2][2]int64{{int64(r[8]), int64(r[9])}, {int64(r[10]), int64(r[11])}}
	heavy = q.d[0]+q.d[1] >= c.theta
	if !heavy && q.s != [2][2]int64{} {
		return false, errors.New("a light node's record carries neighbour sums")
	}
	return heavy, nil
}

// decodeDegrees reads only the two degrees at the front of a record.
func decodeDegrees(b []byte) (d [2]int64, err error) {
	for i := 0; i < 2 && len(b) > 0; i++ {
		v, n := binary.Uvarint(b)
		if n <= 0 || v > maxCount {
			return d, fmt.Errorf("degree %d does not decode", i)
		}
		d[i] = int64(v)
		b = b[n:]
	}
	return d, nil
}

// Derive appends node x's orbit counts at the state src holds: x's record
// and, for a light x, its stored adjacency and the degrees in its
// neighbours' records (at most θ of them); a heavy x's record carries its
// neighbour sums, so a hub reads no neighbour.
func (c *Counter) Derive(src delta.Source, x uint32, dst []uint64) ([]uint64, error) {
	b, err := src.Record(x)
	if err != nil {
		return nil, err
	}
	var q local
	heavy, err := c.decode(b, &q)
	if err != nil {
		return nil, recordError(x, err)
	}
	if !heavy {
		adj, err := src.Adjacent(x, nil)
		if err != nil {
			return nil, err
		}
		var d [2]int64
		for _, y := range adj {
			if y.Links == 0 {
				return nil, fmt.Errorf("signed: node %d: neighbour %d without a tie", x, y.Node)
			}
			a := 0
			if y.Links&delta.LinkNeg != 0 {
				a = 1
			}
			d[a]++
			b, err := src.Record(y.Node)
			if err != nil {
				return nil, err
			}
			dy, err := decodeDegrees(b)
			if err != nil {
				return nil, recordError(y.Node, err)
			}
			q.s[a][0] += dy[0]
			q.s[a][1] += dy[1]
		}
		if d != q.d {
			return nil, recordError(x, fmt.Errorf("degrees %v, stored adjacency %v", q.d, d))
		}
	}
	dst, err = q.vector(x, dst)
	if err != nil {
		return nil, fmt.Errorf("records around node %d do not agree: %w", x, err)
	}
	return dst, nil
}

// Restore resets c to the records in src for the signed graph g: degrees
// and triangles from the records (held to g's degrees), the sides, light
// sums and heavy lists from g, and every heavy record's neighbour sums
// held to what g and the records give. A record that does not decode or
// does not agree is a *delta.RecordError.
func (c *Counter) Restore(g *delta.Graph, src delta.Source) error {
	if g.Kind() != delta.Signed {
		return fmt.Errorf("signed: Restore from a %v graph", g.Kind())
	}
	*c = *NewThreshold(int(c.theta))
	c.grow(g.NumNodes())
	sums := make([][2][2]int64, g.NumNodes())
	for x := range uint32(g.NumNodes()) {
		b, err := src.Record(x)
		if err != nil {
			return err
		}
		var q local
		heavy, err := c.decode(b, &q)
		if err != nil {
			return recordError(x, err)
		}
		neg := int64(g.Neg(x).GetCardinality())
		if want := [2]int64{int64(g.Degree(x)) - neg, neg}; want != q.d {
			return recordError(x, fmt.Errorf("degrees %v, the graph has %v", q.d, want))
		}
		c.nodes[x].d, c.nodes[x].tri, c.heavy[x] = q.d, q.tri, heavy
		sums[x] = q.s
	}
	for x := range uint32(g.NumNodes()) {
		for _, y := range c.neighbours(g, x) {
			if c.heavy[y.node] {
				c.heavyN[x] = append(c.heavyN[x], y)
				continue
			}
			dy := &c.nodes[y.node].d
			c.nodes[x].l[y.neg][0] += dy[0]
			c.nodes[x].l[y.neg][1] += dy[1]
		}
	}
	for x := range uint32(g.NumNodes()) {
		if c.heavy[x] && c.gather(x).s != sums[x] {
			return recordError(x, errors.New("neighbour sums do not match the stored adjacency"))
		}
	}
	clear(c.dirty)
	return nil
}

// recordError names the node whose stored record is wrong.
func recordError(x uint32, err error) error {
	return &delta.RecordError{Node: x, Err: err}
}
