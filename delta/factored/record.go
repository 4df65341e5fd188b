package factored

import (
	"bytes"
	"encoding/binary"
	"errors"
	"fmt"
	"slices"

	"orbitwatch/delta"
)

// A node's record, as stored, is a run of uvarints:
//
//	light node:         d, t, k4, cyc, dd2 (trailing zeros dropped; 3 nodes: d, t)
//	heavy node (d ≥ θ): d, t, k4, cyc, dd2, s1, al, b, ct, dd, ee,
//	                    H, the H heavy neighbours in increasing order,
//	                    P, then P pairs (heavy node q, codeg(x,q)) in increasing q
//	                    (3 nodes: d, t, s1)
//
// with cyc and dd2 the kept parts (package doc). Whether a node is heavy
// follows from d and the threshold, so a record needs no flag, and an
// isolated node's record is empty.

// AppendRecord appends x's record.
func (c *Counter) AppendRecord(dst []byte, x uint32) []byte {
	if int(x) >= len(c.nodes) {
		return dst
	}
	n, f := &c.nodes[x], &c.four[x]
	hs := c.hv[x]
	if hs == nil {
		if c.maxNodes == 3 {
			return appendInts(dst, n.deg, n.tri)
		}
		return appendInts(dst, n.deg, n.tri, f.k4, f.cyc, f.dd2)
	}
	for _, v := range []int64{n.deg, n.tri} {
		dst = binary.AppendUvarint(dst, uint64(v))
	}
	if c.maxNodes == 3 {
		return binary.AppendUvarint(dst, uint64(c.s1(x)))
	}
	for _, v := range []int64{f.k4, f.cyc, f.dd2, c.s1(x), hs.al, hs.b, hs.ct, hs.dd, hs.ee} {
		dst = binary.AppendUvarint(dst, uint64(v))
	}
	hn := slices.Sorted(slices.Values(c.heavyN[x]))
	dst = binary.AppendUvarint(dst, uint64(len(hn)))
	for _, h := range hn {
		dst = binary.AppendUvarint(dst, uint64(h))
	}
	qs := make([]uint32, 0, len(hs.row))
	for q := range hs.row {
		qs = append(qs, q)
	}
	slices.Sort(qs)
	dst = binary.AppendUvarint(dst, uint64(len(qs)))
	for _, q := range qs {
		dst = binary.AppendUvarint(dst, uint64(q))
		dst = binary.AppendUvarint(dst, uint64(hs.row[q]))
	}
	return dst
}

// appendInts appends non-negative values as uvarints, trailing zeros
// dropped.
func appendInts(dst []byte, vs ...int64) []byte {
	n := len(vs)
	for n > 0 && vs[n-1] == 0 {
		n--
	}
	for _, v := range vs[:n] {
		dst = binary.AppendUvarint(dst, uint64(v))
	}
	return dst
}

// stored is a decoded record.
type stored struct {
	d, t, k4, cyc, dd2 uint64
	heavy              bool
	s1, al, b, ct, dd  uint64
	ee                 uint64
	heavyN             []uint32
	row                map[uint32]uint64
}

// uvarints reads a run of uvarints; past the end it reads zeros (light
// records drop trailing zeros).
type uvarints struct {
	b   []byte
	bad bool
}

func (r *uvarints) next() uint64 {
	if len(r.b) == 0 {
		return 0
	}
	v, n := binary.Uvarint(r.b)
	if n <= 0 {
		r.bad, r.b = true, nil
		return 0
	}
	r.b = r.b[n:]
	return v
}

// count reads a list length, which cannot exceed the bytes left.
func (r *uvarints) count() int {
	n := r.next()
	if n > uint64(len(r.b)) {
		r.bad, r.b = true, nil
		return 0
	}
	return int(n)
}

// decode reads a record written by AppendRecord.
func (c *Counter) decode(b []byte) (stored, error) {
	var s stored
	r := uvarints{b: b}
	s.d, s.t = r.next(), r.next()
	if c.maxNodes == 4 {
		s.k4, s.cyc, s.dd2 = r.next(), r.next(), r.next()
	}
	if s.d >= uint64(c.theta) {
		s.heavy = true
		s.s1 = r.next()
		if c.maxNodes == 4 {
			s.al, s.b, s.ct, s.dd, s.ee = r.next(), r.next(), r.next(), r.next(), r.next()
			s.heavyN = make([]uint32, r.count())
			for i := range s.heavyN {
				s.heavyN[i] = uint32(r.next())
			}
			n := r.count()
			s.row = make(map[uint32]uint64, n)
			for range n {
				q := uint32(r.next())
				s.row[q] = r.next()
			}
		}
	}
	if r.bad || len(r.b) != 0 {
		return s, errors.New("record does not decode")
	}
	return s, nil
}

// Restore rebuilds the counter from g's edges (the records are a function
// of the graph and the threshold) and then holds every record to src's:
// a record that differs means the store and the adjacency disagree.
func (c *Counter) Restore(g *delta.Graph, src delta.Source) error {
	if g.Kind() != delta.Undirected {
		return fmt.Errorf("factored: graph kind is %v", g.Kind())
	}
	*c = *NewThreshold(c.maxNodes, int(c.theta))
	c.Load(g)
	var buf []byte
	for x := range uint32(g.NumNodes()) {
		want, err := src.Record(x)
		if err != nil {
			return err
		}
		buf = c.AppendRecord(buf[:0], x)
		if !bytes.Equal(buf, want) {
			return &delta.RecordError{Node: x, Err: errors.New("does not match the stored adjacency")}
		}
	}
	clear(c.dirty)
	return c.fault
}

// Load resets c to the counts of g by inserting g's edges in order.
func (c *Counter) Load(g *delta.Graph) {
	if g.Kind() != delta.Undirected {
		panic("factored: graph kind is " + g.Kind().String())
	}
	*c = *NewThreshold(c.maxNodes, int(c.theta))
	c.grow(g.NumNodes())
	g.ForEachEdge(func(u, v uint32, _ uint32) { c.change(u, v, +1) })
}
