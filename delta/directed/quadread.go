package directed

import (
	"fmt"
	"slices"
	"sync"

	"github.com/RoaringBitmap/roaring/v2"

	"orbitwatch/delta"
)

// view is what a Quads read looks at: the in-memory state (Vector) or a
// stored one (Derive). neighbours returns x's neighbours in increasing id
// order with type(x, y); linked returns type(x, y) (0: not joined); node
// returns x's decoded record, valid for the rest of the read.
type view interface {
	neighbours(x uint32, dst []typed) ([]typed, error)
	linked(x, y uint32) (uint8, error)
	node(x uint32) (*quadNode, error)
	// deg returns x's typed degrees, as node(x).deg but without keeping
	// the record (a read meets its neighbours' neighbours once each).
	deg(x uint32) ([3]int64, error)
}

// wedge is a path x–y–z through a light middle y, by z and the type
// β = 3·(type(x,y)−1) + type(y,z)−1.
type wedge struct {
	z    uint32
	beta uint8
}

// common is a common neighbour z of x and a neighbour y, with type(x,z)
// and type(y,z).
type common struct {
	z      uint32
	tx, ty uint8
}

// readScratch4 is one read's buffers.
type readScratch4 struct {
	n      []int64
	l      local
	nx     []typed
	heavyN []int // positions in nx of x's heavy neighbours
	// lists holds the neighbours of x's light neighbours back to back;
	// listAt[i] is the range of nx[i]'s (empty for heavy ones).
	lists  []typed
	listAt [][2]int
	// commons holds, for light nx[i], the common neighbours of x and
	// nx[i] in commonAt[i].
	commons  []common
	commonAt [][2]int
	wedges   []wedge
	zs       []uint32   // the z of the wedges, once each, ascending
	groups   [][9]int64 // wedge counts to zs[i] by type
	hlist    []typed
	// heavyAt[i]: nx[i] is heavy. pos[z] is 1 + z's position in nx for
	// a large nx (denseIndex), all zero between reads.
	heavyAt []bool
	pos     []int32
	dense   bool
	nodes   map[uint32]*quadNode
	arena   []quadNode
	// it, out and in load bitmaps in the in-memory view.
	it      roaring.ManyIntIterator
	out, in []uint32
}

// denseIndex is the neighbour count from which a read indexes x's
// neighbours in an array by node id instead of searching them.
const denseIndex = 256

// index prepares at for x's neighbours nx.
func (s *readScratch4) index() {
	s.dense = len(s.nx) >= denseIndex
	if !s.dense {
		return
	}
	for i, y := range s.nx {
		if int(y.node) >= len(s.pos) {
			s.pos = slices.Grow(s.pos, int(y.node)+1-len(s.pos))[:int(y.node)+1]
		}
		s.pos[y.node] = int32(i + 1)
	}
}

// unindex clears what index set.
func (s *readScratch4) unindex() {
	if s.dense {
		for _, y := range s.nx {
			s.pos[y.node] = 0
		}
	}
}

// at returns z's position among x's neighbours, or −1.
func (s *readScratch4) at(z uint32) int {
	if s.dense {
		if int(z) < len(s.pos) {
			return int(s.pos[z]) - 1
		}
		return -1
	}
	i, ok := slices.BinarySearchFunc(s.nx, z, func(a typed, z uint32) int { return cmpNode(a.node, z) })
	if !ok {
		return -1
	}
	return i
}

// typeAt returns type(x, z) (0: not joined).
func (s *readScratch4) typeAt(z uint32) uint8 {
	if i := s.at(z); i >= 0 {
		return s.nx[i].t
	}
	return 0
}

// readPool hands out read scratch, so concurrent reads do not share it.
type readPool struct{ p sync.Pool }

func (r *readPool) init() {
	r.p.New = func() any { return &readScratch4{nodes: map[uint32]*quadNode{}} }
}

func (r *readPool) get() *readScratch4 {
	s := r.p.Get().(*readScratch4)
	clear(s.nodes)
	s.arena = s.arena[:0]
	return s
}

func (r *readPool) put(s *readScratch4) { r.p.Put(s) }

// cache returns a slot for x's decoded record in s, and whether it was
// there already.
func (s *readScratch4) cache(x uint32) (*quadNode, bool) {
	if n, ok := s.nodes[x]; ok {
		return n, true
	}
	if len(s.arena) == cap(s.arena) {
		// A new block: earlier pointers stay valid.
		s.arena = make([]quadNode, 0, max(64, 2*cap(s.arena)))
	}
	s.arena = s.arena[:len(s.arena)+1]
	n := &s.arena[len(s.arena)-1]
	s.nodes[x] = n
	return n, false
}

// memView reads the in-memory state.
type memView struct {
	q *Quads
	s *readScratch4
}

func (m memView) neighbours(x uint32, dst []typed) ([]typed, error) {
	t := m.q.t
	if int(x) >= len(t.recs) {
		return dst, nil
	}
	s, d := m.s, &t.recs[x].deg
	s.out = loadN(&s.it, s.out[:0], t.g.Out(x), int(d[tOut-1]+d[tBoth-1]))
	s.in = loadN(&s.it, s.in[:0], t.g.In(x), int(d[tIn-1]+d[tBoth-1]))
	return mergeTyped(s.out, s.in, dst), nil
}

func (m memView) linked(x, y uint32) (uint8, error) {
	var t uint8
	if m.q.t.g.Out(x).Contains(y) {
		t |= tOut
	}
	if m.q.t.g.In(x).Contains(y) {
		t |= tIn
	}
	return t, nil
}

func (m memView) deg(x uint32) ([3]int64, error) {
	if int(x) >= len(m.q.t.recs) {
		return [3]int64{}, nil
	}
	return m.q.t.recs[x].deg, nil
}

func (m memView) node(x uint32) (*quadNode, error) {
	n, ok := m.s.cache(x)
	if ok {
		return n, nil
	}
	*n = quadNode{}
	if int(x) < len(m.q.t.recs) {
		r := &m.q.t.recs[x]
		n.deg, n.tri = r.deg, r.tri
	}
	if h := m.q.heavy[x]; h != nil {
		n.heavy, n.wl, n.heavyN, n.pair = true, h.wl, m.q.heavyN[x], h.pair
	}
	return n, nil
}

// srcView reads a stored state.
type srcView struct {
	src delta.Source
	s   *readScratch4
	adj []delta.Adj
}

func (v *srcView) neighbours(x uint32, dst []typed) ([]typed, error) {
	var err error
	v.adj, err = v.src.Adjacent(x, v.adj[:0])
	if err != nil {
		return dst, err
	}
	for _, a := range v.adj {
		t := uint8(a.Links & (delta.LinkOut | delta.LinkIn))
		if t == 0 {
			return dst, fmt.Errorf("node %d: neighbour %d without an arc", x, a.Node)
		}
		dst = append(dst, typed{a.Node, t})
	}
	return dst, nil
}

func (v *srcView) linked(x, y uint32) (uint8, error) {
	l, err := v.src.Linked(x, y)
	return uint8(l & (delta.LinkOut | delta.LinkIn)), err
}

func (v *srcView) deg(x uint32) ([3]int64, error) {
	n, err := v.node(x)
	if err != nil {
		return [3]int64{}, err
	}
	return n.deg, nil
}

func (v *srcView) node(x uint32) (*quadNode, error) {
	n, ok := v.s.cache(x)
	if ok {
		return n, nil
	}
	b, err := v.src.Record(x)
	if err != nil {
		return nil, err
	}
	if err := decodeQuad(b, n, true); err != nil {
		return nil, fmt.Errorf("record of node %d: %w", x, err)
	}
	return n, nil
}

// Vector appends node x's 730 orbit counts to dst[:0] (read.go's
// derivation on the in-memory state). The error is a record that does
// not solve (a bug).
func (q *Quads) Vector(x uint32, dst []uint64) ([]uint64, error) {
	s := q.reads.get()
	defer q.reads.put(s)
	if q.t.g == nil {
		return append(dst[:0], make([]uint64, q.NumOrbits())...), nil
	}
	return q.derive(memView{q, s}, s, x, dst)
}

// Derive appends node x's orbit counts at the state src holds, from the
// stored records and adjacency alone.
func (q *Quads) Derive(src delta.Source, x uint32, dst []uint64) ([]uint64, error) {
	s := q.reads.get()
	defer q.reads.put(s)
	return q.derive(&srcView{src: src, s: s}, s, x, dst)
}

// orderedTri returns the ordered triangles of a node from its triangle
// counts by orbit.
func (q *Quads) orderedTri(n *quadNode) (tri [3][3][3]int64) {
	for a := range 3 {
		for b := range 3 {
			for c := range 3 {
				o := &q.triOrdered[a][b][c]
				tri[a][b][c] = o.diag * n.tri[o.slot]
			}
		}
	}
	return tri
}

// heavySums returns a heavy node's neighbour degree sums: its light
// neighbours' from its record, its heavy neighbours' from theirs.
func heavySums(v view, n *quadNode) ([3][3]int64, error) {
	w := n.wl
	for _, h := range n.heavyN {
		dh, err := v.deg(h.node)
		if err != nil {
			return w, err
		}
		for b := range 3 {
			w[h.t-1][b] += dh[b]
		}
	}
	return w, nil
}

// typeIn returns type(x, z) from x's sorted typed neighbours (0: none).
func typeIn(nbrs []typed, z uint32) uint8 {
	i, ok := slices.BinarySearchFunc(nbrs, z, func(a typed, z uint32) int { return cmpNode(a.node, z) })
	if !ok {
		return 0
	}
	return nbrs[i].t
}

// derive computes x's orbit counts through v. The pattern counts are:
//
//   - x's local sums (patterns.go) over its neighbours y: their degrees
//     and triangles from their records; w(y) from the record of a heavy
//     y, else by walking y's neighbours' records; tri(x,y) from the
//     codegree row when both are heavy, by walking a light y's neighbours
//     against x's, else by testing a heavy y against each of x's
//     neighbours;
//   - 4-cycles x–y–z–w by the middles' weight: both light from the wedges
//     walked, one light and one heavy by testing each such z against x's
//     heavy neighbours, both heavy from their codegree row (less z = x);
//   - diamonds at a degree-2 node, for each triangle x, p, q: tri(p,q) by
//     walking the light one of p, q, or from the codegree row when both
//     are heavy; K4s x, p, q, w where w closes such a walk (counted at the
//     least light node of p, q, w) or, all heavy, among x's heavy
//     neighbours.
//
// The equations then solve them (equations.solve).
func (q *Quads) derive(v view, s *readScratch4, x uint32, dst []uint64) ([]uint64, error) {
	dst = append(dst[:0], make([]uint64, q.NumOrbits())...)
	eq := q.eq
	nx, err := v.node(x)
	if err != nil {
		return nil, err
	}
	if s.nx, err = v.neighbours(x, s.nx[:0]); err != nil {
		return nil, err
	}
	N := s.nx
	s.index()
	defer s.unindex()
	var w [3][3]int64
	s.heavyN = s.heavyN[:0]
	s.heavyAt = s.heavyAt[:0]
	for i, y := range N {
		ny, err := v.node(y.node)
		if err != nil {
			return nil, err
		}
		for b := range 3 {
			w[y.t-1][b] += ny.deg[b]
		}
		if ny.heavy {
			s.heavyN = append(s.heavyN, i)
		}
		s.heavyAt = append(s.heavyAt, ny.heavy)
	}
	tri := q.orderedTri(nx)
	l := &s.l
	l.reset(&nx.deg, &w, &tri)
	s.lists, s.commons, s.wedges = s.lists[:0], s.commons[:0], s.wedges[:0]
	s.listAt, s.commonAt = s.listAt[:0], s.commonAt[:0]
	for _, y := range N {
		ny, _ := v.node(y.node)
		var wy [3][3]int64
		var t9 tri9
		listFrom, commonFrom := len(s.lists), len(s.commons)
		switch {
		case !ny.heavy:
			if s.lists, err = v.neighbours(y.node, s.lists); err != nil {
				return nil, err
			}
			for _, z := range s.lists[listFrom:] {
				dz, err := v.deg(z.node)
				if err != nil {
					return nil, err
				}
				for b := range 3 {
					wy[z.t-1][b] += dz[b]
				}
				if z.node == x {
					continue
				}
				s.wedges = append(s.wedges, wedge{z.node, (y.t-1)*3 + z.t - 1})
				if tx := s.typeAt(z.node); tx != 0 {
					t9[(tx-1)*3+z.t-1]++
					s.commons = append(s.commons, common{z.node, tx, z.t})
				}
			}
		case nx.heavy:
			if wy, err = heavySums(v, ny); err != nil {
				return nil, err
			}
			if row := nx.pair[y.node]; row != nil {
				t9 = *row
			}
		default:
			if wy, err = heavySums(v, ny); err != nil {
				return nil, err
			}
			for _, z := range N {
				if z.node == y.node {
					continue
				}
				tz, err := v.linked(y.node, z.node)
				if err != nil {
					return nil, err
				}
				if tz != 0 {
					t9[(z.t-1)*3+tz-1]++
				}
			}
		}
		s.listAt = append(s.listAt, [2]int{listFrom, len(s.lists)})
		s.commonAt = append(s.commonAt, [2]int{commonFrom, len(s.commons)})
		var ty *[3][3][3]int64
		if ny.tri != [numTriOrbits]int64{} {
			t := q.orderedTri(ny)
			ty = &t
		}
		l.addNeighbour(y.t, &ny.deg, &wy, ty, &t9)
	}
	s.n = append(s.n[:0], make([]int64, len(dst))...)
	n := s.n
	eq.localPatterns(n, l, true)
	if err := q.readCycles(v, s, x, n); err != nil {
		return nil, err
	}
	if err := q.readDiamonds(v, s, x, n); err != nil {
		return nil, err
	}
	if err := eq.solve(n, x); err != nil {
		return nil, err
	}
	for i, c := range n {
		dst[i] = uint64(c)
	}
	return dst, nil
}

// readCycles adds x's 4-cycle pattern counts to n (see derive).
func (q *Quads) readCycles(v view, s *readScratch4, x uint32, n []int64) error {
	t := q.eq.cycles
	add := func(slot int8, k int64) {
		if slot >= 0 {
			n[t.orbits[slot]] += k
		}
	}
	N := s.nx
	ws := s.wedges
	slices.SortFunc(ws, func(a, b wedge) int { return cmpNode(a.z, b.z) })
	// Group the wedges by z: groups[i] is z's counts by wedge type.
	s.zs, s.groups = s.zs[:0], s.groups[:0]
	for i := 0; i < len(ws); {
		z := ws[i].z
		var c [9]int64
		for ; i < len(ws) && ws[i].z == z; i++ {
			c[ws[i].beta]++
		}
		s.zs = append(s.zs, z)
		s.groups = append(s.groups, c)
		for b1, k1 := range c {
			if k1 == 0 {
				continue
			}
			for b2, k2 := range c {
				p := k1 * k2
				if b1 == b2 {
					p -= k1
				}
				if p > 0 {
					add(t.atTop[b1][b2], p)
				}
			}
		}
	}
	// One light and one heavy middle: each z of a group joined to a heavy
	// neighbour h of x, found by testing every z against h or, when h has
	// fewer neighbours than there are groups, by looking h's neighbours
	// up among the groups.
	lh := func(h typed, z uint32, tz uint8, c *[9]int64) {
		if h.node == z || tz == 0 {
			return
		}
		g := (h.t-1)*3 + tz - 1
		for b1, k1 := range c {
			if k1 != 0 {
				add(t.atTop[b1][g], k1)
				add(t.atTop[g][b1], k1)
			}
		}
	}
	for _, j := range s.heavyN {
		h := N[j]
		nh, err := v.node(h.node)
		if err != nil {
			return err
		}
		if degree(&triadRecord{deg: nh.deg})*8 < int64(len(s.zs)) {
			if s.hlist, err = v.neighbours(h.node, s.hlist[:0]); err != nil {
				return err
			}
			for _, z := range s.hlist {
				if i, ok := slices.BinarySearch(s.zs, z.node); ok {
					lh(h, z.node, z.t, &s.groups[i])
				}
			}
			continue
		}
		for i, z := range s.zs {
			tz, err := v.linked(h.node, z)
			if err != nil {
				return err
			}
			lh(h, z, tz, &s.groups[i])
		}
	}
	for _, i := range s.heavyN {
		y := N[i]
		ny, err := v.node(y.node)
		if err != nil {
			return err
		}
		for _, j := range s.heavyN {
			if j == i {
				continue
			}
			w := N[j]
			row := ny.pair[w.node]
			if row == nil {
				continue
			}
			for pr, k := range row {
				p, r := uint8(pr/3+1), uint8(pr%3+1)
				kk := int64(k)
				if p == rev(y.t) && r == rev(w.t) {
					kk-- // z = x
				}
				if kk > 0 {
					add(t.atTop[(y.t-1)*3+p-1][(w.t-1)*3+r-1], kk)
				}
			}
		}
	}
	return nil
}

// readDiamonds adds x's diamond (degree-2 node) and K4 pattern counts to n
// (see derive).
func (q *Quads) readDiamonds(v view, s *readScratch4, x uint32, n []int64) error {
	eq := q.eq
	N := s.nx
	addN := func(o int, k int64) { n[o] += k }
	for i, p := range N {
		r := s.commonAt[i]
		if r[0] == r[1] || s.heavyAt[i] {
			continue
		}
		listP := s.lists[s.listAt[i][0]:s.listAt[i][1]]
		for _, c := range s.commons[r[0]:r[1]] {
			j := s.at(c.z)
			qHeavy := s.heavyAt[j]
			if !qHeavy && c.z < p.node {
				continue // found from c.z's side
			}
			// tri(p, q) from p's side, walking p's neighbours.
			var t9 tri9
			var listQ []typed
			if !qHeavy {
				listQ = s.lists[s.listAt[j][0]:s.listAt[j][1]]
			}
			for _, wn := range listP {
				if wn.node == c.z {
					continue
				}
				var tq uint8
				if qHeavy {
					var err error
					if tq, err = v.linked(c.z, wn.node); err != nil {
						return err
					}
				} else {
					tq = typeIn(listQ, wn.node)
				}
				if tq == 0 {
					continue
				}
				t9[(wn.t-1)*3+tq-1]++
				if wn.node == x {
					continue
				}
				// A K4 x, p, q, w when w is x's neighbour too; counted
				// once, with p the least light node and q < w.
				k := s.at(wn.node)
				if k < 0 || c.z > wn.node || (!s.heavyAt[k] && wn.node < p.node) {
					continue
				}
				tw := N[k].t
				typ := cliqueTypes([6]uint8{p.t, c.tx, tw, c.ty, wn.t, tq})
				eq.cliqueForms(&typ, 0, func(o int) { n[o]++ })
			}
			eq.diamondForms(p.t, c.tx, c.ty, &t9, addN)
		}
	}
	for a, i := range s.heavyN {
		p := N[i]
		np, err := v.node(p.node)
		if err != nil {
			return err
		}
		for b, j := range s.heavyN[a+1:] {
			qn := N[j]
			tpq, err := v.linked(p.node, qn.node)
			if err != nil {
				return err
			}
			if tpq == 0 {
				continue
			}
			var t9 tri9
			if row := np.pair[qn.node]; row != nil {
				t9 = *row
			}
			eq.diamondForms(p.t, qn.t, tpq, &t9, addN)
			for _, k := range s.heavyN[a+1+b+1:] {
				r := N[k]
				tpr, err := v.linked(p.node, r.node)
				if err != nil {
					return err
				}
				tqr, err := v.linked(qn.node, r.node)
				if err != nil {
					return err
				}
				if tpr != 0 && tqr != 0 {
					typ := cliqueTypes([6]uint8{p.t, qn.t, r.t, tpq, tpr, tqr})
					eq.cliqueForms(&typ, 0, func(o int) { n[o]++ })
				}
			}
		}
	}
	return nil
}
