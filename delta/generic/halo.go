package generic

import (
	"slices"

	"github.com/RoaringBitmap/roaring/v2"

	"orbitwatch/delta"
)

// Layout of halo.mask: bit q says S[q]→x (undirected, signed: S[q]—x),
// bit inShift+q says x→S[q] (signed: the edge S[q]—x is negative), and
// member says x is in S.
const (
	inShift  = maxNodes
	posMask  = 1<<maxNodes - 1
	member   = 1 << 15
	seedBits = 3 | 3<<inShift // the bits that join x to S[0] = u or S[1] = v
)

// loadChunk is the least free room load offers the bitmap iterator.
const loadChunk = 64

// halo is the scratch state of one edge change: the current node set S
// (nodes[:depth], u at 0 and v at 1) and, per graph node x, the positions
// of S it is joined to, in mask[x]: one uint16 per node holds all of them,
// so a node's relation to S is one memory read. Outside an event every
// mask is zero, so an event costs only the nodes it touches.
type halo struct {
	t     *tables
	mask  []uint16
	nodes [maxNodes]uint32
	// nbr[q] lists the successors then the predecessors of S[q] (the
	// neighbours, undirected), nOut[q] of them successors; kept to clear the
	// masks again without reading the bitmaps twice.
	nbr  [maxNodes][]uint32
	nOut [maxNodes]int
	it   roaring.ManyIntIterator
}

// reserve makes the masks cover n nodes. It allocates only when the graph
// has grown past every size seen before.
func (h *halo) reserve(n int) {
	if n > len(h.mask) {
		h.mask = make([]uint16, max(n, 2*len(h.mask)))
	}
}

// load appends the members of b to buf, in increasing order, reading them
// with it. It allocates only when buf is too small.
func load(it *roaring.ManyIntIterator, buf []uint32, b *roaring.Bitmap) []uint32 {
	it.Initialize(b)
	for {
		buf = slices.Grow(buf, loadChunk)
		got := it.NextMany(buf[len(buf):cap(buf)])
		buf = buf[:len(buf)+got]
		if got == 0 || len(buf) < cap(buf) {
			return buf
		}
	}
}

// join records node s as S[q]: it marks s a member and sets bit q in the
// masks of its neighbours. Every neighbour that was joined to no member
// before and is no member itself — an exclusive neighbour of s — is
// appended to ext, once. join returns ext.
func (h *halo) join(g *delta.Graph, q int, s uint32, ext []uint32) []uint32 {
	h.nodes[q] = s
	h.mask[s] |= member
	bit := uint16(1) << q
	list := load(&h.it, h.nbr[q][:0], g.Out(s))
	h.nOut[q] = len(list)
	for _, x := range list {
		if h.mask[x] == 0 {
			ext = append(ext, x)
		}
		h.mask[x] |= bit
	}
	if k := g.Kind(); k != delta.Undirected {
		second := g.In(s)
		if k == delta.Signed {
			// Every negative neighbour is a neighbour already marked
			// above, so none joins ext here.
			second = g.Neg(s)
		}
		list = load(&h.it, list, second)
		bit <<= inShift
		for _, x := range list[h.nOut[q]:] {
			if h.mask[x] == 0 {
				ext = append(ext, x)
			}
			h.mask[x] |= bit
		}
	}
	h.nbr[q] = list
	return ext
}

// leave undoes join(g, q, S[q], ·).
func (h *halo) leave(q int) {
	bit := uint16(1) << q
	list := h.nbr[q]
	for _, x := range list[:h.nOut[q]] {
		h.mask[x] &^= bit
	}
	bit <<= inShift
	for _, x := range list[h.nOut[q]:] {
		h.mask[x] &^= bit
	}
	h.mask[h.nodes[q]] &^= member
}

// codeAt returns the code of the arcs (edges) between node x, placed at
// position p, and the members at positions below p.
func (h *halo) codeAt(p int, x uint32) uint32 {
	m := h.mask[x]
	return h.t.outBits[p][m&posMask] | h.t.inBits[p][m>>inShift&posMask]
}

// seed joins u and v as S[0] and S[1] and returns the code of {u,v}
// without the changing edge, and the nodes joined to u or v. In a Signed
// graph the code keeps the sign bit of the changing edge (read from g
// for a delete, set by neg for an insert), which selects the tables of a
// negative change.
func (h *halo) seed(g *delta.Graph, u, v uint32, neg bool, ext []uint32) (uint32, []uint32) {
	h.reserve(g.NumNodes())
	h.mask[v] |= member
	ext = h.join(g, 0, u, ext)
	code := h.codeAt(1, v) &^ h.t.edgeBit
	if neg {
		code |= h.t.signBit
	}
	ext = h.join(g, 1, v, ext)
	return code, ext
}
