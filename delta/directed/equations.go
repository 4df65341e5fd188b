package directed

import (
	"fmt"
	"sync"

	"gonum.org/v1/gonum/stat/combin"

	"orbitwatch/delta"
	"orbitwatch/delta/catalog"
)

// A pair type says how a node y is joined to x, seen from x: tOut for x→y
// alone, tIn for y→x alone, tBoth for a reciprocal pair (the bits of
// delta.LinkOut and delta.LinkIn). Arrays indexed by type use t−1.
const (
	tOut  = 1
	tIn   = 2
	tBoth = 3
)

// rev returns the type of the same pair seen from the other side.
func rev(t uint8) uint8 { return t>>1 | (t&1)<<1 }

// family is one rooted undirected shape: k positions, the root (the node
// whose counts are read) at position 0, and its edges. A pattern of the
// family gives every edge a pair type (params[i] is the type of
// edges[i] = (p, q) seen from p) and leaves the other pairs free.
type family struct {
	k     int
	edges [][2]int
}

// The families of rooted shapes on 2–4 nodes. Each orbit belongs to
// exactly one: its graphlet's underlying graph rooted at the orbit's
// position. Comments name the positions as the counting code does.
const (
	fEdge        = iota // x=0 – y=1
	fPathEnd3           // x=0 – y=1 – z=2
	fPathMid3           // y=1 – x=0 – z=2
	fTriangle           // x=0, y=1, z=2 with edges xy, yz, xz
	fStarCentre         // x=0 joined to 1, 2, 3
	fStarLeaf           // x=0 – y=1, y joined to 2 and 3
	fPathEnd4           // x=0 – y=1 – z=2 – w=3
	fPathMid4           // y=1 – x=0 – z=2 – w=3
	fCycle              // x=0 – y=1 – z=2 – w=3 – x
	fTailEnd            // x=0 – p=1, triangle p, q=2, r=3
	fTailDeg3           // x=0 – s=1, triangle x, q=2, r=3
	fTailDeg2           // triangle x=0, p=1, r=2, pendant s=3 on p
	fDiamondDeg3        // x=0 – q=1, both joined to u=2 and w=3
	fDiamondDeg2        // triangle x=0, p=1, q=2, w=3 joined to p and q
	fClique             // all six pairs
	numFamilies
)

var families = [numFamilies]family{
	fEdge:        {2, [][2]int{{0, 1}}},
	fPathEnd3:    {3, [][2]int{{0, 1}, {1, 2}}},
	fPathMid3:    {3, [][2]int{{0, 1}, {0, 2}}},
	fTriangle:    {3, [][2]int{{0, 1}, {1, 2}, {0, 2}}},
	fStarCentre:  {4, [][2]int{{0, 1}, {0, 2}, {0, 3}}},
	fStarLeaf:    {4, [][2]int{{0, 1}, {1, 2}, {1, 3}}},
	fPathEnd4:    {4, [][2]int{{0, 1}, {1, 2}, {2, 3}}},
	fPathMid4:    {4, [][2]int{{0, 1}, {0, 2}, {2, 3}}},
	fCycle:       {4, [][2]int{{0, 1}, {1, 2}, {0, 3}, {3, 2}}},
	fTailEnd:     {4, [][2]int{{0, 1}, {1, 2}, {2, 3}, {1, 3}}},
	fTailDeg3:    {4, [][2]int{{0, 1}, {0, 2}, {2, 3}, {0, 3}}},
	fTailDeg2:    {4, [][2]int{{0, 1}, {0, 2}, {1, 2}, {1, 3}}},
	fDiamondDeg3: {4, [][2]int{{0, 1}, {0, 2}, {1, 2}, {0, 3}, {1, 3}}},
	fDiamondDeg2: {4, [][2]int{{0, 1}, {0, 2}, {1, 2}, {1, 3}, {2, 3}}},
	fClique:      {4, [][2]int{{0, 1}, {0, 2}, {0, 3}, {1, 2}, {1, 3}, {2, 3}}},
}

// maxParams is the most edges of a family (the clique's six).
const maxParams = 6

// pattern is the canonical pattern of one orbit: a family and the type
// of each of its edges. N_o(x), the pattern count of orbit o at x, is the
// number of tuples (x, y1, …, y_{k−1}) of distinct nodes whose pairs on
// the family's edges have exactly those types (other pairs free).
type pattern struct {
	fam    int
	params [maxParams]uint8
}

// equations holds, for the directed catalog on 2..k nodes, the pattern of
// every orbit, which family parameter tuples are canonical, and the
// matrix that turns pattern counts into orbit counts.
//
// Every induced subgraph G[S] with x ∈ S that is connected puts x in one
// orbit o′, and contributes to N_o(x) once per bijection of the pattern's
// positions onto S that fixes x and matches the pattern's typed edges, so
//
//	N_o(x) = Σ_o′ A[o][o′] · o′(x),   A[o][o′] = #{σ : pattern(o) ⊆ σ(code(o′))},
//
// counted over the (k−1)! orderings σ of the other positions. A[o][o′] ≠ 0
// needs the underlying graph of o′ to contain that of o, and equal
// underlying graphs mean equal orbits, so solving from the densest orbit
// down is back substitution with the diagonal A[o][o] (the number of
// orderings that fix the pattern) as divisor. Nothing here is typed in: the
// patterns, canonical forms and A come from delta/catalog.
type equations struct {
	cat      *catalog.Catalog
	patterns []pattern // by orbit id
	// slot[f][i] is the orbit whose canonical pattern is family f with
	// parameter tuple i (base-3 digits of t−1, first edge lowest), or −1
	// when tuple i is another form of an orbit canonical elsewhere.
	slot [numFamilies][]int16
	// order lists orbit ids densest first (by underlying edges, then id).
	order []int
	// byFamily[f] lists the orbits of family f in id order; terms[f]
	// their prepared formulas for the families localPatterns evaluates.
	byFamily [numFamilies][]int
	terms    [numFamilies][]term
	diag     []int64
	// col[o′] lists the rows o ≠ o′ with A[o][o′] ≠ 0.
	col [][]entry
	// cycles maps wedge pairs to 4-cycle slots; credited lists the
	// orbits whose pattern counts the recount credits in the output row
	// (diamonds at a degree-2 node, K4s). Both only for k = 4.
	cycles   *cycleTables
	credited []int
}

type entry struct {
	row  int
	coef int64
}

var equationsOnce [5]struct {
	once sync.Once
	eq   *equations
}

// equationsFor returns the equations of the directed catalog on 2..k
// nodes (k 3 or 4), built once.
func equationsFor(k int) *equations {
	e := &equationsOnce[k]
	e.once.Do(func() { e.eq = buildEquations(k) })
	return e.eq
}

// paramIndex returns the base-3 index of a parameter tuple.
func paramIndex(params []uint8) int {
	i := 0
	for j := len(params) - 1; j >= 0; j-- {
		i = 3*i + int(params[j]-1)
	}
	return i
}

// typedCode returns the directed adjacency code of k positions with the
// given typed edges and no other arcs.
func typedCode(edges [][2]int, params []uint8) uint32 {
	var code uint32
	for i, e := range edges {
		if params[i]&tOut != 0 {
			code |= 1 << catalog.ArcBit(e[0], e[1])
		}
		if params[i]&tIn != 0 {
			code |= 1 << catalog.ArcBit(e[1], e[0])
		}
	}
	return code
}

// pairType returns the type of the pair (i, j) in a code, seen from i.
func pairType(code uint32, i, j int) uint8 {
	return uint8(code>>catalog.ArcBit(i, j)&1 | (code>>catalog.ArcBit(j, i)&1)<<1)
}

func buildEquations(k int) *equations {
	cat, err := catalog.New(delta.Directed, k)
	if err != nil {
		panic("directed: " + err.Error())
	}
	n := cat.NumOrbits()
	eq := &equations{cat: cat, patterns: make([]pattern, n), diag: make([]int64, n), col: make([][]entry, n)}
	seen := make([]bool, n)
	for f := range numFamilies {
		fam := families[f]
		if fam.k > k {
			continue
		}
		e := len(fam.edges)
		total := 1
		for range e {
			total *= 3
		}
		eq.slot[f] = make([]int16, total)
		params := make([]uint8, e)
		for i := range total {
			for j, r := 0, i; j < e; j, r = j+1, r/3 {
				params[j] = uint8(r%3) + 1
			}
			gid, orbits := cat.Lookup(fam.k, typedCode(fam.edges, params))
			if gid < 0 {
				panic("directed: a family pattern is not connected")
			}
			o := int(orbits[0])
			if seen[o] {
				if eq.patterns[o].fam != f {
					panic(fmt.Sprintf("directed: orbit %d lies in two families", o))
				}
				eq.slot[f][i] = -1
				continue
			}
			seen[o] = true
			eq.byFamily[f] = append(eq.byFamily[f], o)
			eq.slot[f][i] = int16(o)
			eq.patterns[o].fam = f
			copy(eq.patterns[o].params[:], params)
		}
	}
	for o, ok := range seen {
		if !ok {
			panic(fmt.Sprintf("directed: orbit %d lies in no family", o))
		}
	}
	reps := make([]uint32, n)
	for o := range n {
		reps[o] = rootedCode(cat, o)
	}
	perms := [5][][]int{}
	for m := 1; m <= 3; m++ {
		perms[m+1] = combin.Permutations(m, m)
	}
	for o := range n {
		p := eq.patterns[o]
		fam := families[p.fam]
		for o2 := range n {
			if cat.Graphlets[cat.Orbits[o2].Graphlet].Nodes != fam.k {
				continue
			}
			var a int64
			for _, perm := range perms[fam.k] {
				sigma := func(i int) int {
					if i == 0 {
						return 0
					}
					return perm[i-1] + 1
				}
				match := true
				for i, ed := range fam.edges {
					if pairType(reps[o2], sigma(ed[0]), sigma(ed[1])) != p.params[i] {
						match = false
						break
					}
				}
				if match {
					a++
				}
			}
			switch {
			case o2 == o && a == 0:
				panic(fmt.Sprintf("directed: orbit %d's pattern does not fit its own graphlet", o))
			case o2 == o:
				eq.diag[o] = a
			case a != 0:
				eq.col[o2] = append(eq.col[o2], entry{row: o, coef: a})
			}
		}
	}
	under := func(o int) int {
		return len(families[eq.patterns[o].fam].edges)
	}
	for o := range n {
		for _, en := range eq.col[o] {
			if under(en.row) >= under(o) {
				panic(fmt.Sprintf("directed: A[%d][%d] breaks the triangular order", en.row, o))
			}
		}
	}
	if k == 4 {
		eq.buildTerms()
		eq.cycles = buildCycleTables(eq)
		eq.credited = append(append([]int(nil), eq.byFamily[fDiamondDeg2]...), eq.byFamily[fClique]...)
	}
	eq.order = make([]int, n)
	for i := range eq.order {
		eq.order[i] = i
	}
	// Densest first; stable in id.
	for i := 1; i < n; i++ {
		for j := i; j > 0 && under(eq.order[j]) > under(eq.order[j-1]); j-- {
			eq.order[j], eq.order[j-1] = eq.order[j-1], eq.order[j]
		}
	}
	return eq
}

// rootedCode returns the code of orbit o's graphlet with a position of o
// moved to position 0 and the others after it in their order.
func rootedCode(cat *catalog.Catalog, o int) uint32 {
	g := &cat.Graphlets[cat.Orbits[o].Graphlet]
	root := cat.Orbits[o].Positions[0]
	pos := make([]int, g.Nodes) // old position → new
	next := 1
	for q := range g.Nodes {
		if q == root {
			continue
		}
		pos[q] = next
		next++
	}
	var arcs [][2]int
	for _, e := range g.Edges {
		arcs = append(arcs, [2]int{pos[e[0]], pos[e[1]]})
	}
	return catalog.Code(delta.Directed, arcs)
}

// slotOf returns the orbit whose canonical pattern is family f with the
// given parameters, or −1 when they are another form of an orbit's pattern.
func (eq *equations) slotOf(f int, params ...uint8) int {
	return int(eq.slot[f][paramIndex(params)])
}

// solve turns the pattern counts n (indexed by orbit id, NumOrbits of
// them) of node x into its orbit counts in place, densest orbit first:
//
//	o = (N_o − Σ_{o′ denser} A[o][o′] · o′) / A[o][o].
//
// A remainder or a negative count means the pattern counts were wrong (a
// bug or a broken update contract); solve returns an error naming x then.
func (eq *equations) solve(n []int64, x uint32) error {
	for _, o := range eq.order {
		v := n[o]
		if v == 0 {
			continue
		}
		d := eq.diag[o]
		if v < 0 || v%d != 0 {
			return fmt.Errorf("directed: node %d orbit %d solves to %d/%d", x, o, v, d)
		}
		v /= d
		n[o] = v
		for _, en := range eq.col[o] {
			n[en.row] -= en.coef * v
		}
	}
	return nil
}

// smallPatterns adds to n the pattern counts of the 2- and 3-node open
// orbits of a node with typed degrees d and neighbour degree sums
// w[a][b] = Σ_{y : type(x,y) = a} d_b(y) (types as indices t−1):
//
//	edge a:            N = d_a
//	y –a– x –b– z:     N = d_a·d_b − [a = b]·d_a          (y ≠ z)
//	x –a– y –b– z:     N = w[a][b] − [b = ā]·d_a          (z ≠ x)
//
// where ā is a seen from y. Triangle patterns are the caller's.
func (eq *equations) smallPatterns(n []int64, d *[3]int64, w *[3][3]int64) {
	for _, o := range eq.byFamily[fEdge] {
		n[o] += d[eq.patterns[o].params[0]-1]
	}
	for _, o := range eq.byFamily[fPathMid3] {
		a, b := eq.patterns[o].params[0], eq.patterns[o].params[1]
		v := d[a-1] * d[b-1]
		if a == b {
			v -= d[a-1]
		}
		n[o] += v
	}
	for _, o := range eq.byFamily[fPathEnd3] {
		a, b := eq.patterns[o].params[0], eq.patterns[o].params[1]
		v := w[a-1][b-1]
		if b == rev(a) {
			v -= d[a-1]
		}
		n[o] += v
	}
}
