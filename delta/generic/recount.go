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
// extension list. Each set is classified by its adjacency code, the code
// of its parent set plus the pairs of the newest member tested in the
// graph, and each member's orbit count is incremented. The work is one
// visit per connected set, so a hub of degree d alone costs about
// C(d, k−1) visits: meant for verification and modest graphs. Roots are
// shared among GOMAXPROCS workers, each with its own matrix; the matrices
// are summed at the end, so a recount holds GOMAXPROCS × nodes × orbits
// counters at its peak.
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

// esu is one recount worker's state. near[x] counts the members of the
// current set that x is or is adjacent to; a node with near 0 is an
// exclusive neighbour candidate.
type esu struct {
	g    *delta.Graph
	cat  *catalog.Catalog
	vec  *delta.Vectors
	set  [maxNodes]uint32
	ext  [maxNodes + 1][]uint32
	nb   [maxNodes][]uint32 // neighbours of set[i], to unmark them
	near []uint16
	out  []uint32
	in   []uint32
	nbrs []uint32
	it   roaring.ManyIntIterator
}

// root counts every connected set whose least node is root.
func (s *esu) root(root uint32) {
	if len(s.near) < s.g.NumNodes() {
		s.near = make([]uint16, s.g.NumNodes())
	}
	s.set[0] = root
	ext := s.ext[1][:0]
	for _, x := range s.mark(0, root) {
		if x > root {
			ext = append(ext, x)
		}
	}
	s.ext[1] = ext
	s.grow(1, 0, ext)
	s.unmark(0)
}

// mark adds set[i] = w to the near counts and returns its neighbours.
func (s *esu) mark(i int, w uint32) []uint32 {
	nb := append(s.nb[i][:0], s.neighbours(w)...)
	s.nb[i] = nb
	s.near[w]++
	for _, x := range nb {
		s.near[x]++
	}
	return nb
}

// unmark undoes mark(i, set[i]).
func (s *esu) unmark(i int) {
	s.near[s.set[i]]--
	for _, x := range s.nb[i] {
		s.near[x]--
	}
}

// grow extends set[:size], whose adjacency code is code, by each node of
// ext in turn, counting every set it forms. The code of set[:size+1] is
// code with the bits between the new node and set[:size] added (the code
// layout is prefix-compatible, see catalog.PairBit).
func (s *esu) grow(size int, code uint32, ext []uint32) {
	for i, w := range ext {
		s.set[size] = w
		c := code | s.bits(size, w)
		s.count(size+1, c)
		if size+1 == s.cat.MaxNodes {
			continue // a full set extends no further
		}
		next := append(s.ext[size+1][:0], ext[i+1:]...)
		for _, x := range s.mark(size, w) {
			// Exclusive: above the root, and near 1 — w's own mark — so
			// neither in set[:size] nor adjacent to it.
			if x > s.set[0] && s.near[x] == 1 {
				next = append(next, x)
			}
		}
		s.ext[size+1] = next
		s.grow(size+1, c, next)
		s.unmark(size)
	}
}

// bits returns the code bits between w at position p and set[:p].
func (s *esu) bits(p int, w uint32) uint32 {
	var code uint32
	for i, y := range s.set[:p] {
		switch s.g.Kind() {
		case delta.Directed:
			if s.g.HasEdge(y, w) {
				code |= 1 << catalog.ArcBit(i, p)
			}
			if s.g.HasEdge(w, y) {
				code |= 1 << catalog.ArcBit(p, i)
			}
		case delta.Signed:
			if l := s.g.Links(y, w); l != 0 {
				eb, nb := catalog.SignedBits(i, p)
				code |= 1 << eb
				if l&delta.LinkNeg != 0 {
					code |= 1 << nb
				}
			}
		default:
			if s.g.HasEdge(y, w) {
				code |= 1 << catalog.PairBit(i, p)
			}
		}
	}
	return code
}

// count adds one to the orbit of each member of set[:size], whose
// adjacency code is code.
func (s *esu) count(size int, code uint32) {
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
	if s.g.Kind() != delta.Directed {
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
