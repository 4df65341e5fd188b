package directed

import (
	"encoding/binary"
	"fmt"
	"slices"

	"orbitwatch/delta"
)

// Record formats of Quads, after a leading uvarint tag:
//
//	light (tag 0): the 18 counts of a Triads record (3 degrees, 15 triangle counts)
//	heavy (tag 1): the same, the 9 light degree sums wl[a][b], the number
//	               of heavy neighbours and per neighbour its id (as the gap
//	               from the previous one's) and type, the number of
//	               codegree rows, and per row the partner's id (as a gap)
//	               and its 9 counts
//
// all as uvarints. A light node with all counts zero appends nothing.
const (
	tagLight = 0
	tagHeavy = 1
)

// AppendRecord appends x's record.
func (q *Quads) AppendRecord(dst []byte, x uint32) []byte {
	if int(x) >= len(q.t.recs) {
		return dst
	}
	r := &q.t.recs[x]
	h := q.heavy[x]
	if h == nil && *r == (triadRecord{}) {
		return dst
	}
	tag := uint64(tagLight)
	if h != nil {
		tag = tagHeavy
	}
	dst = binary.AppendUvarint(dst, tag)
	for _, v := range r.deg {
		dst = binary.AppendUvarint(dst, uint64(v))
	}
	for _, v := range r.tri {
		dst = binary.AppendUvarint(dst, uint64(v))
	}
	if h == nil {
		return dst
	}
	for _, row := range h.wl {
		for _, v := range row {
			dst = binary.AppendUvarint(dst, uint64(v))
		}
	}
	hs := slices.SortedFunc(slices.Values(q.heavyN[x]), func(a, b typed) int { return cmpNode(a.node, b.node) })
	dst = binary.AppendUvarint(dst, uint64(len(hs)))
	prev := uint32(0)
	for _, h := range hs {
		dst = binary.AppendUvarint(dst, uint64(h.node-prev))
		dst = binary.AppendUvarint(dst, uint64(h.t))
		prev = h.node
	}
	partners := make([]uint32, 0, len(h.pair))
	for p := range h.pair {
		partners = append(partners, p)
	}
	slices.Sort(partners)
	dst = binary.AppendUvarint(dst, uint64(len(partners)))
	prev = 0
	for _, p := range partners {
		dst = binary.AppendUvarint(dst, uint64(p-prev))
		prev = p
		for _, v := range h.pair[p] {
			dst = binary.AppendUvarint(dst, uint64(v))
		}
	}
	return dst
}

// quadNode is a decoded record: what a read needs of a node. For a heavy
// node: its light neighbours' degree sums, its heavy neighbours with
// type(x, h), and its codegree rows.
type quadNode struct {
	deg    [3]int64
	tri    [numTriOrbits]int64
	heavy  bool
	wl     [3][3]int64
	heavyN []typed
	pair   map[uint32]*tri9
}

// decoder reads uvarints off a record, remembering the first error.
type decoder struct {
	b   []byte
	err error
}

func (d *decoder) next(what string, limit uint64) uint64 {
	if d.err != nil {
		return 0
	}
	v, n := binary.Uvarint(d.b)
	if n <= 0 {
		d.err = fmt.Errorf("%s does not decode", what)
		return 0
	}
	if v > limit {
		d.err = fmt.Errorf("%s is %d, above %d", what, v, limit)
		return 0
	}
	d.b = d.b[n:]
	return v
}

// decodeQuad decodes a Quads record into n (pair rows only when withPairs).
func decodeQuad(b []byte, n *quadNode, withPairs bool) error {
	*n = quadNode{}
	if len(b) == 0 {
		return nil
	}
	d := &decoder{b: b}
	tag := d.next("tag", tagHeavy)
	for i := range n.deg {
		n.deg[i] = int64(d.next("degree", maxCount))
	}
	for i := range n.tri {
		n.tri[i] = int64(d.next("triangle count", maxCount))
	}
	if tag == tagHeavy {
		n.heavy = true
		for a := range n.wl {
			for b := range n.wl[a] {
				n.wl[a][b] = int64(d.next("degree sum", maxCount))
			}
		}
		hs := d.next("heavy neighbour count", 1<<32)
		h := uint64(0)
		for i := uint64(0); i < hs && d.err == nil; i++ {
			h += d.next("heavy neighbour", 1<<32)
			t := d.next("heavy neighbour type", tBoth)
			if h >= 1<<32 || t == 0 {
				d.err = fmt.Errorf("heavy neighbour %d of type %d out of range", h, t)
			}
			n.heavyN = append(n.heavyN, typed{uint32(h), uint8(t)})
		}
		if withPairs {
			rows := d.next("row count", 1<<32)
			n.pair = make(map[uint32]*tri9, min(rows, 1<<16))
			p := uint64(0)
			for i := uint64(0); i < rows && d.err == nil; i++ {
				p += d.next("partner", 1<<32)
				row := &tri9{}
				for i := range row {
					row[i] = uint32(d.next("codegree", 1<<32-1))
				}
				if p >= 1<<32 {
					d.err = fmt.Errorf("partner id %d out of range", p)
				}
				n.pair[uint32(p)] = row
			}
			if d.err == nil && len(d.b) != 0 {
				d.err = fmt.Errorf("%d bytes after the record", len(d.b))
			}
		}
	} else if d.err == nil && len(d.b) != 0 {
		d.err = fmt.Errorf("%d bytes after the record", len(d.b))
	}
	return d.err
}

// Restore resets q to the records in src for graph g. A record that does
// not decode, degrees that disagree with g's arcs, or a heavy node whose
// degree sums or codegrees disagree with g and the other records is an
// error.
func (q *Quads) Restore(g *delta.Graph, src delta.Source) error {
	if g.Kind() != delta.Directed {
		panic("directed: Restore from an undirected graph")
	}
	q.t = NewTriads()
	q.heavy = map[uint32]*heavyNode{}
	q.heavyN = nil
	q.t.g = g
	q.grow(g.NumNodes())
	var n quadNode
	stored := map[uint32][]typed{} // heavy nodes' heavy neighbours as stored
	for x := range uint32(g.NumNodes()) {
		b, err := src.Record(x)
		if err != nil {
			return err
		}
		if err := decodeQuad(b, &n, true); err != nil {
			return fmt.Errorf("record of node %d: %w", x, err)
		}
		r := &q.t.recs[x]
		r.deg, r.tri = n.deg, n.tri
		out, in := g.Out(x), g.In(x)
		both := int64(out.AndCardinality(in))
		if want := [3]int64{int64(out.GetCardinality()) - both, int64(in.GetCardinality()) - both, both}; want != r.deg {
			return fmt.Errorf("record of node %d: degrees %v, graph has %v", x, r.deg, want)
		}
		if n.heavy {
			q.heavy[x] = &heavyNode{wl: n.wl, pair: n.pair}
			stored[x] = n.heavyN
		}
	}
	// Rebuild the heavy-neighbour lists, then recount every heavy node's
	// sums and codegrees from g to check the records.
	for h := range q.heavy {
		q.t.nbrs = q.t.loadNeighbours(g, h, q.t.nbrs[:0])
		for _, z := range q.t.nbrs {
			q.heavyN[z.node] = append(q.heavyN[z.node], typed{h, rev(z.t)})
		}
	}
	for h, hn := range q.heavy {
		var wl [3][3]int64
		pair := map[uint32]*tri9{}
		q.t.nbrs = q.t.loadNeighbours(g, h, q.t.nbrs[:0])
		for _, z := range q.t.nbrs {
			if q.heavy[z.node] == nil {
				for b := range 3 {
					wl[z.t-1][b] += q.t.recs[z.node].deg[b]
				}
			}
			for _, h2 := range q.heavyN[z.node] {
				if h2.node == h {
					continue
				}
				row := pair[h2.node]
				if row == nil {
					row = &tri9{}
					pair[h2.node] = row
				}
				row[(z.t-1)*3+rev(h2.t)-1]++
			}
		}
		if wl != hn.wl {
			return fmt.Errorf("record of heavy node %d: light degree sums %v, graph gives %v", h, hn.wl, wl)
		}
		want := slices.SortedFunc(slices.Values(q.heavyN[h]), func(a, b typed) int { return cmpNode(a.node, b.node) })
		if !slices.Equal(want, stored[h]) {
			return fmt.Errorf("record of heavy node %d: heavy neighbours %v, graph gives %v", h, stored[h], want)
		}
		if len(pair) != len(hn.pair) {
			return fmt.Errorf("record of heavy node %d: %d codegree rows, graph gives %d", h, len(hn.pair), len(pair))
		}
		for p, row := range pair {
			if got := hn.pair[p]; got == nil || *got != *row {
				return fmt.Errorf("record of heavy node %d: codegree with %d disagrees with the graph", h, p)
			}
		}
	}
	clear(q.t.changed)
	return nil
}
