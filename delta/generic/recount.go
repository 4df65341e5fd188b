package generic

import (
	"runtime"
	"sync"
	"sync/atomic"

	"github.com/RoaringBitmap/roaring/v2"

	"orbitwatch/delta"
	"orbitwatch/delta/catalog"
)

// rootsPerClaim is how many roots a recount worker takes at a time; small
// enough to balance hubs across workers, large enough to keep the shared
// counter cold.
const rootsPerClaim = 64

type recounter struct {
	cat *catalog.Catalog
}

// NewRecounter returns a static recount for cat's kind and size, a code path
// separate from NewEngine and NewEnumerator. It enumerates every (weakly)
// connected node set S with 2 ≤ |S| ≤ k exactly once by rooted ESU
// (Wernicke 2006): S grows from its least node r, and only nodes greater
// than r that are exclusive neighbours of the newest member enter the
// extension list. Each set is classified by testing every pair, and each
// member's orbit count is incremented. Roots are shared among GOMAXPROCS
// workers, each with its own matrix; the matrices are summed at the end, so
// a recount holds GOMAXPROCS × nodes × orbits counters at its peak.
func NewRecounter(cat *catalog.Catalog) delta.Recounter {
	if cat.MaxNodes < 2 || cat.MaxNodes > maxNodes {
		panic("generic: catalog size outside 2..5")
	}
	return &recounter{cat: cat}
}

// Recount returns every node's orbit vector in g. It panics if g's kind is
// not the catalog's or a count would pass 2^64−1.
func (r *recounter) Recount(g *delta.Graph) *delta.Vectors {
	if g.Kind() != r.cat.Kind {
		panic("generic: recount of a graph of another kind than the catalog")
	}
	n := g.NumNodes()
	workers := max(1, min(runtime.GOMAXPROCS(0), (n+rootsPerClaim-1)/rootsPerClaim))
	parts := make([]*delta.Vectors, workers)
	var claimed atomic.Int64
	var wg sync.WaitGroup
	for w := range parts {
		parts[w] = delta.NewVectors(n, r.cat.NumOrbits())
		wg.Add(1)
		go func(vec *delta.Vectors) {
			defer wg.Done()
			s := &esu{g: g, cat: r.cat, vec: vec}
			for {
				lo := int(claimed.Add(rootsPerClaim)) - rootsPerClaim
				if lo >= n {
					return
				}
				for root := lo; root < min(lo+rootsPerClaim, n); root++ {
					s.root(uint32(root))
				}
			}
		}(parts[w])
	}
	wg.Wait()
	sum := parts[0]
	for _, p := range parts[1:] {
		for x := 0; x < n; x++ {
			for o, c := range p.Row(uint32(x)) {
				if c == 0 {
					continue
				}
				if c > 1<<63-1 || sum.Add(uint32(x), o, int64(c)) != nil {
					panic("generic: recount overflows a uint64 count")
				}
			}
		}
	}
	return sum
}

// esu is one recount worker's state.
type esu struct {
	g    *delta.Graph
	cat  *catalog.Catalog
	vec  *delta.Vectors
	set  [maxNodes]uint32
	ext  [maxNodes + 1][]uint32
	out  []uint32
	in   []uint32
	nbrs []uint32
	it   roaring.ManyIntIterator
}

// root counts every connected set whose least node is root.
func (s *esu) root(root uint32) {
	s.set[0] = root
	ext := s.ext[1][:0]
	for _, x := range s.neighbours(root) {
		if x > root {
			ext = append(ext, x)
		}
	}
	s.ext[1] = ext
	s.grow(1, ext)
}

// grow extends the set set[:size] by each node of ext in turn; it counts
// the set itself first.
func (s *esu) grow(size int, ext []uint32) {
	if size >= 2 {
		s.count(size)
	}
	if size == s.cat.MaxNodes {
		return
	}
	for i, w := range ext {
		next := append(s.ext[size+1][:0], ext[i+1:]...)
		for _, x := range s.neighbours(w) {
			if x > s.set[0] && !s.touches(x, size) {
				next = append(next, x)
			}
		}
		s.ext[size+1] = next
		s.set[size] = w
		s.grow(size+1, next)
	}
}

// touches reports whether x is in set[:size] or adjacent to one of them.
func (s *esu) touches(x uint32, size int) bool {
	for _, y := range s.set[:size] {
		if x == y || s.g.Adjacent(x, y) {
			return true
		}
	}
	return false
}

// count classifies set[:size] by testing every ordered pair and adds one to
// each member's orbit.
func (s *esu) count(size int) {
	var code uint32
	directed := s.g.Kind() == delta.Directed
	for j := 1; j < size; j++ {
		for i := 0; i < j; i++ {
			a, b := s.set[i], s.set[j]
			if directed {
				if s.g.HasEdge(a, b) {
					code |= 1 << catalog.ArcBit(i, j)
				}
				if s.g.HasEdge(b, a) {
					code |= 1 << catalog.ArcBit(j, i)
				}
			} else if s.g.HasEdge(a, b) {
				code |= 1 << catalog.PairBit(i, j)
			}
		}
	}
	graphlet, orbits := s.cat.Lookup(size, code)
	if graphlet < 0 {
		panic("generic: ESU produced a disconnected set")
	}
	for i, x := range s.set[:size] {
		if s.vec.Add(x, int(orbits[i]), 1) != nil {
			panic("generic: recount overflows a uint64 count")
		}
	}
}

// neighbours returns the nodes adjacent to x in either direction, sorted,
// in a buffer that the next call reuses.
func (s *esu) neighbours(x uint32) []uint32 {
	s.out = load(&s.it, s.out[:0], s.g.Out(x))
	if s.g.Kind() == delta.Undirected {
		return s.out
	}
	s.in = load(&s.it, s.in[:0], s.g.In(x))
	merged := s.nbrs[:0]
	i, j := 0, 0
	for i < len(s.out) || j < len(s.in) {
		switch {
		case j == len(s.in) || (i < len(s.out) && s.out[i] < s.in[j]):
			merged = append(merged, s.out[i])
			i++
		case i == len(s.out) || s.in[j] < s.out[i]:
			merged = append(merged, s.in[j])
			j++
		default:
			merged = append(merged, s.out[i])
			i, j = i+1, j+1
		}
	}
	s.nbrs = merged
	return merged
}
