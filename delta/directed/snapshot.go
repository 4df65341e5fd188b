package directed

import (
	"slices"

	"github.com/RoaringBitmap/roaring/v2"

	"orbitwatch/delta"
	"orbitwatch/delta/internal/parallel"
)

// snapshot is a read-only copy of a directed graph's underlying undirected
// graph in compressed sparse rows, relabelled by rank: nodes are ordered
// by (degree, id), so "x below y" is x < y. Row x lists x's neighbours
// ascending in adj[off[x]:off[x+1]], those above x from up[x] on, and
// typ[i] is the pair type of entry i seen from x.
type snapshot struct {
	off  []int
	up   []int
	adj  []uint32
	typ  []uint8
	orig []uint32   // orig[x] is the graph's id of rank x
	deg  [][3]int64 // typed degrees by rank
}

func newSnapshot(g *delta.Graph) *snapshot {
	n := g.NumNodes()
	deg := make([]int, n)
	maxDeg := 0
	forEachNode(n, func(_ int, x uint32) {
		out, in := g.Out(x), g.In(x)
		deg[x] = int(out.GetCardinality() + in.GetCardinality() - out.AndCardinality(in))
	})
	for _, d := range deg {
		maxDeg = max(maxDeg, d)
	}
	// Counting sort by degree, stable in id.
	first := make([]int, maxDeg+2)
	for _, d := range deg {
		first[d+1]++
	}
	for d := 1; d < len(first); d++ {
		first[d] += first[d-1]
	}
	rank := make([]uint32, n)
	s := &snapshot{off: make([]int, n+1), up: make([]int, n), orig: make([]uint32, n), deg: make([][3]int64, n)}
	for x, d := range deg {
		r := first[d]
		first[d]++
		rank[x] = uint32(r)
		s.orig[r] = uint32(x)
	}
	for r, x := range s.orig {
		s.off[r+1] = s.off[r] + deg[x]
	}
	s.adj = make([]uint32, s.off[n])
	s.typ = make([]uint8, s.off[n])
	type scratch struct {
		it      roaring.ManyIntIterator
		out, in []uint32
		row     []typed
	}
	scr := make([]scratch, workers())
	forEachNode(n, func(w int, r uint32) {
		sc := &scr[w]
		x := s.orig[r]
		sc.out = load(&sc.it, sc.out[:0], g.Out(x))
		sc.in = load(&sc.it, sc.in[:0], g.In(x))
		sc.row = mergeTyped(sc.out, sc.in, sc.row[:0])
		for i := range sc.row {
			sc.row[i].node = rank[sc.row[i].node]
		}
		slices.SortFunc(sc.row, func(a, b typed) int { return int(a.node) - int(b.node) })
		lo := s.off[r]
		d := &s.deg[r]
		for i, y := range sc.row {
			s.adj[lo+i] = y.node
			s.typ[lo+i] = y.t
			d[y.t-1]++
		}
		i, _ := slices.BinarySearch(s.adj[lo:s.off[r+1]], r)
		s.up[r] = lo + i
	})
	return s
}

func (s *snapshot) numNodes() int { return len(s.off) - 1 }

// find returns the entry of y in x's row, or −1.
func (s *snapshot) find(x, y uint32) int {
	lo, hi := s.off[x], s.off[x+1]
	if y > x {
		lo = s.up[x]
	} else {
		hi = s.up[x]
	}
	i, ok := slices.BinarySearch(s.adj[lo:hi], y)
	if !ok {
		return -1
	}
	return lo + i
}

// workers returns how many goroutines a pass over the nodes uses.
func workers() int { return parallel.Workers() }

// forEachNode calls f(worker, x) for every node x in 0..n−1 on workers()
// goroutines, in small chunks because rank order puts the hubs, the
// costliest nodes, together at the end; f must write only state owned by
// x or by its worker, or write atomically.
func forEachNode(n int, f func(worker int, x uint32)) { parallel.ForEach(n, 64, f) }

// forEachTriangle calls f(i, p, q) for every triangle x < y < z whose
// lowest node is x, with i, p and q the entries of y in x's row, of z in
// x's row and of z in y's row; triangles with the same y come together,
// in increasing z.
func (s *snapshot) forEachTriangle(x uint32, f func(i, p, q int)) {
	end := s.off[x+1]
	for i := s.up[x]; i < end; i++ {
		y := s.adj[i]
		p, q, qe := i+1, s.up[y], s.off[y+1]
		for p < end && q < qe {
			switch a, b := s.adj[p], s.adj[q]; {
			case a < b:
				p++
			case a > b:
				q++
			default:
				f(i, p, q)
				p++
				q++
			}
		}
	}
}

// forEachWedgeBelow calls f(y, z, type(x,y), type(y,z)) for every path
// x–y–z with y and z below x, in row order.
func (s *snapshot) forEachWedgeBelow(x uint32, f func(y, z uint32, a, b uint8)) {
	for i := s.off[x]; i < s.up[x]; i++ {
		y, a := s.adj[i], s.typ[i]
		for j := s.off[y]; j < s.off[y+1]; j++ {
			z := s.adj[j]
			if z >= x {
				break
			}
			f(y, z, a, s.typ[j])
		}
	}
}

// typeOf returns the type of the pair (x, y) seen from x; they must be
// joined.
func (s *snapshot) typeOf(x, y uint32) uint8 { return s.typ[s.find(x, y)] }

// intersectAbove appends to dst the entries, in p's row, of the common
// neighbours q > p of n and p, where i is p's entry in n's row: the rest
// of n's row after i against p's upper part, by a merge when they are of
// like length, else by binary searches of the shorter in the longer.
func (s *snapshot) intersectAbove(n uint32, i int, p uint32, dst []int) []int {
	a := s.adj[i+1 : s.off[n+1]]
	lo, hi := s.up[p], s.off[p+1]
	b := s.adj[lo:hi]
	switch {
	case len(a) == 0 || len(b) == 0:
	case len(a) > 16*len(b):
		for j, q := range b {
			if _, ok := slices.BinarySearch(a, q); ok {
				dst = append(dst, lo+j)
			}
		}
	case len(b) > 16*len(a):
		for _, q := range a {
			if j, ok := slices.BinarySearch(b, q); ok {
				dst = append(dst, lo+j)
			}
		}
	default:
		x, y := 0, 0
		for x < len(a) && y < len(b) {
			switch {
			case a[x] < b[y]:
				x++
			case a[x] > b[y]:
				y++
			default:
				dst = append(dst, lo+y)
				x++
				y++
			}
		}
	}
	return dst
}
