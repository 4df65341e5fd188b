package five

import "fmt"

// trees sets the tree orbits of x in row, whose other 5-node orbits are
// already final: it counts the non-induced copies of the 5-path, the
// chair and the 4-star at x by the formulas below and solves
//
//	o_p = N_p − Σ_{o ≠ p} A[p][o] · o_o
//
// with A = catalog.Overlap (a tree's copies lie on tree or cyclic node
// sets; no tree holds another tree of the same size). The error is
// ErrOverflow, or an orbit that solves to a negative count (a broken
// equation: never clamped).
//
// With d = d(x), N = N(x), t(·) triangles at a node, c_y the common
// neighbours of x and y for any y ≠ x (t_y = c_y for y ∈ N, the
// triangles on the edge xy; Σ_y C(c_y, 2) is the number of 4-cycles
// through x), and S1, Q, C3, S2, T2, SQ, SS2 as in local:
//
//	star centre  C(d,4)
//	star leaf    Σ_{y∈N} C(d(y)−1,3)
//	chair centre C(d−1,2)·S1 − 2(d−2)·t(x)
//	chair middle (d−1)·Q − Σ_{y∈N} t_y (d(y)−2)
//	chair end    SQ − d·C(d−1,2) − Σ_{y∈N} t_y (d(y)−2)
//	chair leaf   Σ_{y∈N} [(d(y)−2)(S1(y) − d + 1 − t_y) − 2t(y) + 2t_y]
//	path middle  [S1² − Σ_{y∈N}(d(y)−1)² + Σ_{y∈N} t_y (3−2d(y)) − 2 Σ_y C(c_y,2)] / 2
//	path next    (d−1)(S2 − d(d−1)) + Σ_{y∈N} t_y (3−d−d(y)) − Σ_y c_y² + S1
//	path end     SS2 − d·S1 − Σ_{y∈N}(d(y)−1)² − 2(d−2)t(x) − Σ_y c_y² + S1 − 2·T2 + 2t(x)
//
// Each chooses the copy's nodes outward from x and subtracts the choices
// that repeat a node (a neighbour chosen twice, a walk closing on a
// triangle or a 4-cycle). TestEveryConnectedGraph holds every formula to
// enumeration on every connected graph up to 7 nodes.
func (w *worker) trees(l *local, x uint32, row []uint64) error {
	c := w.c
	var ck checked
	// Σ_{y≠x} c_y² = Σ_{y≠x} c_y + 2 Σ_{y≠x} C(c_y, 2) = S1 + 2·(4-cycles
	// through x), and a 4-cycle through x is one pair of common
	// neighbours of x and the node opposite.
	c4 := l.squares[x]
	sq := ck.add(l.s1[x], ck.mul(2, c4))
	d := int64(c.deg(x))
	t := l.tri[x]
	s1 := l.s1[x]
	var d2, tMid, tNext, tChair, mid, leaf int64
	for i, y := range c.nb(x) {
		dy := int64(c.deg(y))
		ty := int64(l.etri[c.off[x]+i])
		d2 = ck.add(d2, ck.mul(dy-1, dy-1))
		tMid = ck.add(tMid, ck.mul(ty, 3-2*dy))
		tNext = ck.add(tNext, ck.mul(ty, 3-d-dy))
		tChair = ck.add(tChair, ck.mul(ty, dy-2))
		leaf = ck.add(leaf, ck.add(ck.mul(dy-2, ck.sub(ck.sub(l.s1[y], d-1), ty)), 2*ty-2*l.tri[y]))
	}
	var n [numTreeRoles]int64
	n[starCentre] = ck.choose(d, 4)
	n[starLeaf] = l.c3[x]
	n[chairCentre] = ck.sub(ck.mul(ck.choose(d-1, 2), s1), ck.mul(2*(d-2), t))
	mid = ck.sub(ck.mul(d-1, l.q[x]), tChair)
	n[chairMiddle] = mid
	n[chairEnd] = ck.sub(ck.sub(l.sq[x], ck.mul(d, ck.choose(d-1, 2))), tChair)
	n[chairLeaf] = leaf
	n[pathMiddle] = ck.sub(ck.add(ck.sub(ck.mul(s1, s1), d2), tMid), 2*c4) / 2
	n[pathNext] = ck.add(ck.sub(ck.add(ck.mul(d-1, ck.sub(l.s2[x], ck.mul(d, d-1))), tNext), sq), s1)
	end := ck.sub(l.ss2[x], ck.mul(d, s1))
	end = ck.sub(ck.sub(end, d2), ck.mul(2*(d-2), t))
	end = ck.sub(ck.add(end, s1), sq)
	n[pathEnd] = ck.add(ck.sub(end, 2*l.t2[x]), 2*t)
	if ck.overflow {
		return ErrOverflow
	}
	for r, p := range w.eq.treeOrbit {
		v := n[r]
		for o := first5; o < numOrbits; o++ {
			if a := w.eq.overlap[p][o]; a != 0 && o != p {
				if row[o] > 1<<62 {
					return ErrOverflow
				}
				v = ck.sub(v, ck.mul(a, int64(row[o])))
			}
		}
		if ck.overflow {
			return ErrOverflow
		}
		if v < 0 {
			return fmt.Errorf("five: tree orbit %d of node %d solves to %d", p, x, v)
		}
		row[p] = uint64(v)
	}
	return nil
}
