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
	for bc, k := range t {
		if k == 0 {
			continue
		}
		kk := int64(k)
		for e := range 3 {
			l.v[a][bc/3][bc%3][e] += kk * dy[e]
		}
		for ef, k2 := range t {
			l.dd3[a][bc][ef] += kk * int64(k2)
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
	is := func(ok bool) int64 {
		if ok {
			return 1
		}
		return 0
	}
	for f := fStarCentre; f <= fDiamondDeg3; f++ {
		switch {
		case f == fCycle:
			continue
		case f == fTailEnd && !l.anyPend:
			continue // no neighbour in a triangle
		case f >= fTailDeg3 && !l.hasTri:
			continue // x in no triangle
		}
		for _, o := range eq.byFamily[f] {
			p := &eq.patterns[o].params
			a, b, c, e := p[0], p[1], p[2], p[3]
			ar := rev(a)
			A, B, C, E := a-1, b-1, c-1, e-1
			var v int64
			switch f {
			case fStarCentre:
				v = d[A] * (d[B] - is(b == a)) * (d[C] - is(c == a) - is(c == b))
			case fStarLeaf:
				e1, e2 := is(b == ar), is(c == ar)+is(c == b)
				v = l.leaf[A][B][C] - e2*w[A][B] - e1*w[A][C] + e1*e2*d[A]
			case fPathEnd4:
				v = l.q[A][B][C] - is(b == ar)*d[A]*d[C] - is(c == rev(b))*(w[A][B]-is(b == ar)*d[A]) - tri[A][B][rev(c)-1]
			case fPathMid4:
				v = (d[A]-is(a == b))*(w[B][C]-is(c == rev(b))*d[B]) - tri[B][C][A]
			case fTailEnd:
				v = l.pend[A][B][C][E] - is(b == ar)*tri[A][E][C] - is(e == ar)*tri[A][B][rev(c)-1]
			case fTailDeg3:
				v = tri[B][C][E] * (d[A] - is(a == b) - is(a == e))
			case fTailDeg2:
				v = l.v[A][B][C][E] - (is(e == ar)+is(e == c))*tri[A][C][B]
			case fDiamondDeg3:
				F := p[4] - 1
				v = l.dd3[A][B*3+C][E*3+F] - is(b == e && c == p[4])*tri[A][C][B]
			}
			n[o] += v
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
	pn, qn := rev(np), rev(nq)
	for e := uint8(1); e <= 3; e++ {
		for f := uint8(1); f <= 3; f++ {
			k := int64(t[(e-1)*3+f-1])
			if e == pn && f == qn {
				k--
			}
			if k > 0 {
				if o := eq.slotOf(fDiamondDeg2, np, nq, pq, e, f); o >= 0 {
					add(o, k)
				}
			}
			k = int64(t[(f-1)*3+e-1])
			if e == qn && f == pn {
				k--
			}
			if k > 0 {
				if o := eq.slotOf(fDiamondDeg2, nq, np, rev(pq), e, f); o >= 0 {
					add(o, k)
				}
			}
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
