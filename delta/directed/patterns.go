package directed

// local holds what the pattern counts of one node x are computed from:
// its typed degrees d, its neighbour degree sums w[a][b] =
// Σ_{type(x,y)=a} d_b(y), its ordered triangles tri[a][b][c] (pairs (y, z)
// with type(x,y) = a, type(y,z) = b, type(x,z) = c; indices t−1), and for
// 4 nodes the sums over its neighbours y (tri(x,y)[b][c] counts the r with
// type(x,r) = b, type(y,r) = c):
//
//	q[a][b][c]       = Σ_{type(x,y)=a} w(y)[b][c]
//	leaf[a][b][c]    = Σ_{type(x,y)=a} d_b(y)·d_c(y)
//	pend[a][b][c][e] = Σ_{type(x,y)=a} tri(y)[b][c][e]
//	v[a][b][c][e]    = Σ_{type(x,y)=a} tri(x,y)[b][c]·d_e(y)
//	dd3[a][bc][ef]   = Σ_{type(x,y)=a} tri(x,y)[bc]·tri(x,y)[ef]
type local struct {
	d      [3]int64
	w      [3][3]int64
	tri    [3][3][3]int64
	hasTri bool
	// anyPend: some neighbour is in a triangle (pend is not all zero).
	anyPend bool
	q       [3][3][3]int64
	leaf    [3][3][3]int64
	pend    [3][3][3][3]int64
	v       [3][3][3][3]int64
	dd3     [3][9][9]int64
}

// reset starts the sums of a node with degrees d, degree sums w and
// ordered triangles tri.
func (l *local) reset(d *[3]int64, w *[3][3]int64, tri *[3][3][3]int64) {
	*l = local{d: *d, w: *w, tri: *tri}
	l.hasTri = *tri != [3][3][3]int64{}
}

// addNeighbour adds neighbour y, with a = type(x,y) (1..3), to the sums:
// its degrees dy, degree sums wy, ordered triangles ty (nil when y is in
// none) and the typed triangles t = tri(x,y) of the pair.
func (l *local) addNeighbour(a uint8, dy *[3]int64, wy *[3][3]int64, ty *[3][3][3]int64, t *tri9) {
	a--
	for b := range 3 {
		for c := range 3 {
			l.q[a][b][c] += wy[b][c]
			l.leaf[a][b][c] += dy[b] * dy[c]
		}
	}
	if ty != nil {
		l.anyPend = true
		for b := range 3 {
			for c := range 3 {
				for e := range 3 {
					l.pend[a][b][c][e] += ty[b][c][e]
				}
			}
		}
	}
	if *t == (tri9{}) {
		return
	}
	// Most pairs have common neighbours of one or two types: pair only
	// the non-zero counts.
	var nz [9]uint8
	k := 0
	for bc, c := range t {
		if c != 0 {
			nz[k] = uint8(bc)
			k++
		}
	}
	for _, bc := range nz[:k] {
		kk := int64(t[bc])
		for e := range 3 {
			l.v[a][bc/3][bc%3][e] += kk * dy[e]
		}
		for _, ef := range nz[:k] {
			l.dd3[a][bc][ef] += kk * int64(t[ef])
		}
	}
}

// localPatterns adds to n (indexed by orbit) the pattern counts that x's local
// sums give: the 2- and 3-node open ones (smallPatterns), the triangles
// (tri at the pattern's parameters) and, with four, the 4-node ones below
// (params in family edge order, ā the type seen from the other side, [·]
// 1 when true):
//
//	star centre (a,b,c):  d_a·(d_b − [b=a])·(d_c − [c=a] − [c=b])
//	star leaf (a,b,c):    leaf[a][b][c] − e₂·w[a][b] − e₁·w[a][c] + e₁e₂·d_a,
//	                      e₁ = [b=ā], e₂ = [c=ā] + [c=b]
//	4-path end (a,b,c):   q[a][b][c] − [b=ā]·d_a·d_c − [c=b̄]·(w[a][b] − [b=ā]·d_a) − tri[a][b][c̄]
//	4-path middle (a,b,c): (d_a − [a=b])·(w[b][c] − [c=b̄]·d_b) − tri[b][c][a]
//	tail end (a,b,c,e):   pend[a][b][c][e] − [b=ā]·tri[a][e][c] − [e=ā]·tri[a][b][c̄]
//	tail degree 3 (a,b,c,e): tri[b][c][e]·(d_a − [a=b] − [a=e])
//	tail degree 2 (a,b,c,e): v[a][b][c][e] − ([e=ā] + [e=c])·tri[a][c][b]
//	diamond degree 3 (a,b,c,e,f): dd3[a][bc][ef] − [(b,c)=(e,f)]·tri[a][c][b]
//
// Each subtracted term counts the tuples of the sum whose nodes are not
// distinct (a node met twice, or x met again). 4-cycles, diamonds at a
// degree-2 node and K4s are the caller's.
func (eq *equations) localPatterns(n []int64, l *local, four bool) {
	eq.smallPatterns(n, &l.d, &l.w)
	for _, o := range eq.byFamily[fTriangle] {
		p := &eq.patterns[o].params
		n[o] += l.tri[p[0]-1][p[1]-1][p[2]-1]
	}
	if !four {
		return
	}
	d, w, tri := &l.d, &l.w, &l.tri
	for _, t := range eq.terms[fStarCentre] {
		n[t.o] += d[t.A] * (d[t.B] - t.k1) * (d[t.C] - t.k2)
	}
	for _, t := range eq.terms[fStarLeaf] {
		n[t.o] += l.leaf[t.A][t.B][t.C] - t.k2*w[t.A][t.B] - t.k1*w[t.A][t.C] + t.k1*t.k2*d[t.A]
	}
	for _, t := range eq.terms[fPathEnd4] {
		n[t.o] += l.q[t.A][t.B][t.C] - t.k1*d[t.A]*d[t.C] - t.k2*(w[t.A][t.B]-t.k1*d[t.A]) - tri[t.A][t.B][t.CR]
	}
	for _, t := range eq.terms[fPathMid4] {
		n[t.o] += (d[t.A]-t.k1)*(w[t.B][t.C]-t.k2*d[t.B]) - tri[t.B][t.C][t.A]
	}
	if l.anyPend {
		for _, t := range eq.terms[fTailEnd] {
			n[t.o] += l.pend[t.A][t.B][t.C][t.E] - t.k1*tri[t.A][t.E][t.C] - t.k2*tri[t.A][t.B][t.CR]
		}
	}
	if !l.hasTri {
		return // x in no triangle: the rest are zero
	}
	for _, t := range eq.terms[fTailDeg3] {
		n[t.o] += tri[t.B][t.C][t.E] * (d[t.A] - t.k1)
	}
	for _, t := range eq.terms[fTailDeg2] {
		n[t.o] += l.v[t.A][t.B][t.C][t.E] - t.k1*tri[t.A][t.C][t.B]
	}
	for _, t := range eq.terms[fDiamondDeg3] {
		n[t.o] += l.dd3[t.A][t.B*3+t.C][t.E*3+t.F] - t.k1*tri[t.A][t.C][t.B]
	}
}

// term is one 4-node orbit's pattern formula in localPatterns, prepared:
// its parameters as indices (t−1), CR = rev(c)−1, and the 0/1 (or 0–2)
// correction factors k1, k2 of its family.
type term struct {
	o                 int
	A, B, C, E, F, CR uint8
	k1, k2            int64
}

// buildTerms prepares the terms of every family localPatterns evaluates.
func (eq *equations) buildTerms() {
	is := func(ok bool) int64 {
		if ok {
			return 1
		}
		return 0
	}
	for f := fStarCentre; f <= fDiamondDeg3; f++ {
		if f == fCycle {
			continue
		}
		for _, o := range eq.byFamily[f] {
			p := eq.patterns[o].params
			a, b, c, e, ff := p[0], p[1], p[2], p[3], p[4]
			ar := rev(a)
			t := term{o: o, A: a - 1, B: b - 1, C: c - 1, E: e - 1, F: ff - 1, CR: rev(c) - 1}
			switch f {
			case fStarCentre:
				t.k1, t.k2 = is(b == a), is(c == a)+is(c == b)
			case fStarLeaf:
				t.k1, t.k2 = is(b == ar), is(c == ar)+is(c == b)
			case fPathEnd4:
				t.k1, t.k2 = is(b == ar), is(c == rev(b))
			case fPathMid4:
				t.k1, t.k2 = is(a == b), is(c == rev(b))
			case fTailEnd:
				t.k1, t.k2 = is(b == ar), is(e == ar)
			case fTailDeg3:
				t.k1 = is(a == b) + is(a == e)
			case fTailDeg2:
				t.k1 = is(e == ar) + is(e == c)
			case fDiamondDeg3:
				t.k1 = is(b == e && c == ff)
			}
			eq.terms[f] = append(eq.terms[f], t)
		}
	}
}

// diamondForms calls add(o, k) for the diamond patterns at a degree-2 node
// n of the triangle n, p, q with type(n,p) = np, type(n,q) = nq,
// type(p,q) = pq: t counts the other common neighbours w of p and q by
// (type(p,w), type(q,w)), n itself included. For the order (p, q) the
// tuples (n, p, q, w) with type(p,w) = e, type(q,w) = f number t[e][f],
// less one when n is such a w; likewise for (q, p). Only canonical forms
// are added (equations.slot), so each tuple is counted once.
func (eq *equations) diamondForms(np, nq, pq uint8, t *tri9, add func(o int, k int64)) {
	slots := eq.slot[fDiamondDeg2]
	pn, qn := rev(np), rev(nq)
	// Parameter tuples (np, nq, pq, e, f) and (nq, np, p̄q, e, f) by
	// their base-3 index (paramIndex): the first three digits are fixed.
	pqBase := int(np-1) + 3*int(nq-1) + 9*int(pq-1)
	qpBase := int(nq-1) + 3*int(np-1) + 9*int(rev(pq)-1)
	for i, c := range t {
		if c == 0 {
			continue
		}
		// c nodes w with type(p,w) = e, type(q,w) = f: tuples (n, p, q, w)
		// of the first form and (n, q, p, w) of the second, with e and f
		// swapped; n itself is one of them when e = p̄n and f = q̄n.
		e, f := i/3, i%3
		k := int64(c)
		if uint8(e+1) == pn && uint8(f+1) == qn {
			k--
		}
		if k == 0 {
			continue
		}
		if o := slots[pqBase+27*e+81*f]; o >= 0 {
			add(int(o), k)
		}
		if o := slots[qpBase+27*f+81*e]; o >= 0 {
			add(int(o), k)
		}
	}
}

// cliquePerms lists the orderings of positions 1, 2, 3.
var cliquePerms = [6][3]int{{1, 2, 3}, {1, 3, 2}, {2, 1, 3}, {2, 3, 1}, {3, 1, 2}, {3, 2, 1}}

// cliqueTypes spreads the pair types of a K4 on positions 0–3, given for
// (0,1), (0,2), (0,3), (1,2), (1,3), (2,3) from the first position, into
// a matrix typ[i][j] = type(i, j).
func cliqueTypes(t [6]uint8) [4][4]uint8 {
	var typ [4][4]uint8
	for i, e := range families[fClique].edges {
		typ[e[0]][e[1]] = t[i]
		typ[e[1]][e[0]] = rev(t[i])
	}
	return typ
}

// cliqueForms calls add(o) once for each ordering of the other three
// positions of a K4 (pair types typ) whose tuple from root is its orbit's
// canonical form.
func (eq *equations) cliqueForms(typ *[4][4]uint8, root int, add func(o int)) {
	var others [3]int
	j := 0
	for q := range 4 {
		if q != root {
			others[j] = q
			j++
		}
	}
	for _, perm := range cliquePerms {
		pos := [4]int{root, others[perm[0]-1], others[perm[1]-1], others[perm[2]-1]}
		var params [6]uint8
		for i, e := range families[fClique].edges {
			params[i] = typ[pos[e[0]]][pos[e[1]]]
		}
		if o := eq.slotOf(fClique, params[:]...); o >= 0 {
			add(o)
		}
	}
}
