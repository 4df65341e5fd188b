package directed

import (
	"fmt"
	"sync/atomic"

	"orbitwatch/delta"
)

type recounter struct {
	k  int
	eq *equations
}

// NewRecounter returns the static directed recount of orbits on
// 2..maxNodes nodes (maxNodes 3 or 4), a code path separate from Triads
// and from every enumerating engine. It snapshots the graph into rows
// relabelled by degree with the pair type of every entry, counts each
// triangle once from its lowest node (typed triangles per node and per
// edge), each non-induced 4-cycle once from its highest node, each
// diamond with a degree-2 node at a triangle, each K4 once; every other
// pattern (stars, paths, tailed triangles, diamonds at a degree-3 node)
// comes from sums over a node's neighbours, and the orbit equations turn
// each node's 730 pattern counts into orbit counts. Passes run on
// runtime.GOMAXPROCS goroutines; the result does not depend on their
// number.
func NewRecounter(maxNodes int) delta.Recounter {
	if maxNodes != 3 && maxNodes != 4 {
		panic(fmt.Sprintf("directed: recount of %d-node graphlets (want 3 or 4)", maxNodes))
	}
	return &recounter{k: maxNodes, eq: equationsFor(maxNodes)}
}

// tri9 is one edge's triangles by type: tri9[p*3+q] for the entry (x, y)
// counts the nodes r with type(x,r) = p+1 and type(y,r) = q+1.
type tri9 [9]uint32

// state is what the passes of one recount share.
type state struct {
	k   int
	s   *snapshot
	eq  *equations
	vec *delta.Vectors
	// tri[x] holds x's ordered triangles: tri[x][a][b][c] counts the
	// ordered pairs (y, z) with type(x,y) = a, type(y,z) = b,
	// type(x,z) = c (indices t−1).
	tri [][3][3][3]int64
	// edge[i] is the typed triangle count of entry i (4 nodes only).
	edge []tri9
	// w[x][a][b] = Σ_{y : type(x,y) = a} d_b(y).
	w [][3][3]int64
	// cyc holds each worker's 4-cycle counts (cycles.go).
	cyc []*cycleScratch
	// hasTri[x]: x is in a triangle; credited[x] ≠ 0: x's output row
	// holds diamond or K4 credits. Both let solveNode skip work and
	// untouched memory.
	hasTri   []bool
	credited []uint8
}

// Recount returns every node's orbit vector. g must be Directed with no
// node joined to more than 2^20 others.
func (r *recounter) Recount(g *delta.Graph) *delta.Vectors {
	st := r.newState(g)
	for _, pass := range r.passes(st) {
		pass.run()
	}
	return st.vec
}

// newState snapshots g and allocates what the passes fill.
func (r *recounter) newState(g *delta.Graph) *state {
	if g.Kind() != delta.Directed {
		panic("directed: recount of a graph of kind " + g.Kind().String())
	}
	s := newSnapshot(g)
	n := s.numNodes()
	if n > 0 && s.off[n]-s.off[n-1] > delta.MaxRecountDegree {
		panic(fmt.Sprintf("directed: degree %d above 2^20, counts could overflow int64", s.off[n]-s.off[n-1]))
	}
	st := &state{s: s, k: r.k, eq: r.eq, vec: delta.NewVectors(n, r.eq.cat.NumOrbits()), tri: make([][3][3][3]int64, n), w: make([][3][3]int64, n),
		hasTri: make([]bool, n), credited: make([]uint8, n)}
	if r.k == 4 {
		st.edge = make([]tri9, len(s.adj))
	}
	return st
}

// pass is one named step of a recount; the benchmark times them.
type pass struct {
	name string
	run  func()
}

// passes returns the recount's steps in order: triangles (and their
// mirror copies), neighbour degree sums, for 4 nodes the 4-cycles and
// the diamonds and K4s, and the per-node solve.
func (r *recounter) passes(st *state) []pass {
	p := []pass{{"triangles", st.triangles}}
	if r.k == 4 {
		p = append(p, pass{"mirror", st.mirror})
	}
	p = append(p, pass{"degree sums", st.degreeSums})
	if r.k == 4 {
		p = append(p, pass{"4-cycles", st.cycles}, pass{"diamonds and K4s", st.diamondsAndCliques})
	}
	return append(p, pass{"solve", st.solveAll})
}

// degreeSums fills w and hasTri.
func (st *state) degreeSums() {
	s := st.s
	forEachNode(s.numNodes(), func(_ int, x uint32) {
		st.hasTri[x] = st.tri[x] != [3][3][3]int64{}
		w := &st.w[x]
		for i := s.off[x]; i < s.off[x+1]; i++ {
			d := &s.deg[s.adj[i]]
			a := s.typ[i] - 1
			for b := range 3 {
				w[a][b] += d[b]
			}
		}
	})
}

// solveAll solves every node. A node whose counts do not solve is a bug
// in the passes: solveAll panics.
func (st *state) solveAll() {
	scratch := make([]*solveScratch, workers())
	forEachNode(st.s.numNodes(), func(wk int, x uint32) {
		if scratch[wk] == nil {
			scratch[wk] = &solveScratch{n: make([]int64, st.eq.cat.NumOrbits())}
		}
		if err := st.solveNode(scratch[wk], x); err != nil {
			panic(err)
		}
	})
}

// triangles counts every triangle x < y < z once, from x: the ordered
// triangles of its three nodes and, for 4 nodes, the typed counts of its
// three edges at their lower ends.
func (st *state) triangles() {
	s := st.s
	forEachNode(s.numNodes(), func(_ int, x uint32) {
		s.forEachTriangle(x, func(i, p, q int) {
			y, z := s.adj[i], s.adj[p]
			xy, xz, yz := s.typ[i], s.typ[p], s.typ[q]
			yx, zx, zy := rev(xy), rev(xz), rev(yz)
			st.addTri(x, xy, yz, xz)
			st.addTri(x, xz, zy, xy)
			st.addTri(y, yx, xz, yz)
			st.addTri(y, yz, zx, yx)
			st.addTri(z, zx, xy, zy)
			st.addTri(z, zy, yx, zx)
			if st.edge != nil {
				atomic.AddUint32(&st.edge[i][(xz-1)*3+yz-1], 1)
				atomic.AddUint32(&st.edge[p][(xy-1)*3+zy-1], 1)
				atomic.AddUint32(&st.edge[q][(yx-1)*3+zx-1], 1)
			}
		})
	})
}

// addTri counts one ordered triangle (y, z) at x with type(x,y) = a,
// type(y,z) = b, type(x,z) = c.
func (st *state) addTri(x uint32, a, b, c uint8) {
	atomic.AddInt64(&st.tri[x][a-1][b-1][c-1], 1)
}

// mirror copies every edge's typed triangle counts from its lower end's
// entry to its upper end's, transposed: tri(y,x)[q][p] = tri(x,y)[p][q].
func (st *state) mirror() {
	s := st.s
	forEachNode(s.numNodes(), func(_ int, x uint32) {
		for j := s.off[x]; j < s.up[x]; j++ {
			k := s.find(s.adj[j], x)
			src, dst := &st.edge[k], &st.edge[j]
			for p := range 3 {
				for q := range 3 {
					dst[q*3+p] = src[p*3+q]
				}
			}
		}
	})
}

// diamondsAndCliques credits, at every node n, its diamonds with n at a
// degree-2 node and its K4s, now that every edge's typed triangle count
// is known. Each node walks its own triangles n, p, q (p < q, found by
// intersecting n's row with p's upper part) and writes only its own row,
// so a hub's credits need no atomics: for each order (p, q), per type
// pair (e, f), tri(p,q)[e][f] nodes w joined to p and q, less n itself;
// and for each r > q in that intersection joined to q, the K4 n, p, q, r,
// once per ordering of p, q, r that is its orbit's canonical form. The
// work is Σ over edges np of the smaller of the two intersected lists
// (binary searches into the longer).
func (st *state) diamondsAndCliques() {
	s := st.s
	common := make([][]int, workers()) // entries of the q in p's row
	forEachNode(s.numNodes(), func(wk int, n uint32) {
		row := st.vec.Row(s.orig[n])
		add := func(o int, k int64) { row[o] += uint64(k) }
		touched := false
		cs := common[wk]
		for i := s.off[n]; i < s.off[n+1]; i++ {
			p := s.adj[i]
			cs = s.intersectAbove(n, i, p, cs[:0])
			for a, jq := range cs {
				q := s.adj[jq]
				np, nq, pq := s.typ[i], s.typeOf(n, q), s.typ[jq]
				st.eq.diamondForms(np, nq, pq, &st.edge[jq], add)
				touched = true
				for _, jr := range cs[a+1:] {
					r := s.adj[jr]
					if k := s.find(q, r); k >= 0 {
						typ := cliqueTypes([6]uint8{np, nq, s.typeOf(n, r), pq, s.typ[jr], s.typ[k]})
						st.eq.cliqueForms(&typ, 0, func(o int) { row[o]++ })
					}
				}
			}
		}
		common[wk] = cs
		if touched {
			st.credited[n] = 1
		}
	})
}

// solveScratch is one worker's buffer for solveNode.
type solveScratch struct {
	n []int64
	l local
}

// solveNode computes rank x's pattern counts (eq.localPatterns from x's local
// sums, plus the slots the enumerations credited), solves them and stores
// x's orbit counts.
func (st *state) solveNode(sc *solveScratch, x uint32) error {
	s := st.s
	row := st.vec.Row(s.orig[x])
	n := sc.n
	clear(n)
	// Only the diamond (degree-2) and K4 slots were credited in the row,
	// and only in rows marked.
	if st.credited[x] != 0 {
		for _, o := range st.eq.credited {
			n[o] = int64(row[o])
			if n[o] < 0 {
				return fmt.Errorf("directed: node %d slot %d credited past 2^63", s.orig[x], o)
			}
		}
	}
	if st.cyc != nil {
		st.addCycles(n, x)
	}
	l := &sc.l
	l.reset(&s.deg[x], &st.w[x], &st.tri[x])
	if st.k == 4 {
		for i := s.off[x]; i < s.off[x+1]; i++ {
			y := s.adj[i]
			var ty *[3][3][3]int64
			if st.hasTri[y] {
				ty = &st.tri[y]
			}
			l.addNeighbour(s.typ[i], &s.deg[y], &st.w[y], ty, &st.edge[i])
		}
	}
	st.eq.localPatterns(n, l, st.k == 4)
	if err := st.eq.solve(n, s.orig[x]); err != nil {
		return err
	}
	for o, v := range n {
		row[o] = uint64(v)
	}
	return nil
}
