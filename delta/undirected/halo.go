package undirected

import (
	"github.com/RoaringBitmap/roaring/v2"

	"orbitwatch/delta"
)

// halo sums what the 4-node changes of the endpoints need, by role
// (roleA, roleB, roleC): set sizes, paths leaving N[u] ∪ N[v], and edges
// inside and between the sets.
type halo struct {
	size [numRoles]int64
	// out[r] = Σ_{w of role r} |N(w) ∩ R|, R the nodes outside N[u] ∪ N[v].
	out [numRoles]int64
	// edges[r][q] = Σ_{w of role r} |N(w) ∩ Q|: the edges between the sets,
	// twice the edges inside a set when r == q.
	edges [numRoles][numRoles]int64
}

// lanes is how many neighbour walks halo4 starts together: each start
// chases a few pointers through the graph's bitmaps, and independent chases
// overlap in the processor where one after another would each wait.
const lanes = 8

// lane is one neighbour walk in flight.
type lane struct {
	it    roaring.ManyIntIterator
	w     uint32
	k     int
	chunk [64]uint32
}

// halo4 emits the changes of every halo node except u and v and fills h.
// A 4-node set {u,v,w,z} changes only if w is in A ∪ B ∪ C and z is either
// in A ∪ B ∪ C too or outside, adjacent to w; walking N(w) for every such w
// meets each of those z once.
func (e *engine) halo4(g *delta.Graph, s int64, h *halo, emit delta.Emit) {
	ws := e.inner[:0]
	for _, w := range e.nu {
		if e.mark[w] != roleEnd {
			ws = append(ws, w)
		}
	}
	for _, w := range e.nv {
		if e.mark[w] == roleB {
			ws = append(ws, w)
		}
	}
	e.inner = ws
	for len(ws) > 0 {
		group := e.lanes[:min(lanes, len(ws))]
		for j := range group {
			group[j].w = ws[j]
			group[j].it.Initialize(g.Out(ws[j]))
		}
		for j := range group {
			group[j].k = group[j].it.NextMany(group[j].chunk[:])
		}
		for j := range group {
			e.walk(&group[j], s, h, emit)
		}
		ws = ws[len(group):]
	}
}

// walk finishes the neighbour walk of a halo node w: it emits the changes
// of the nodes z outside the halo (per path u–w–z or v–w–z, z a new 4-path
// end when w is in A or B; a 3-star leaf turned tailed-triangle tail when w
// is common), then w's own changes, and adds w's counts to h.
func (e *engine) walk(l *lane, s int64, h *halo, emit delta.Emit) {
	role := e.mark[l.w]
	var n [numRoles]int64
	for ; l.k > 0; l.k = l.it.NextMany(l.chunk[:]) {
		for _, z := range l.chunk[:l.k] {
			m := e.mark[z]
			n[m]++
			if m != roleFar {
				continue
			}
			if role == roleC {
				emit(z, oStarLeaf, -s)
				emit(z, oTailEnd, s)
			} else {
				emit(z, oPathEnd4, s)
			}
		}
	}
	far := n[roleFar]
	var d [maxOrbits]int64
	switch role {
	case roleA:
		side(&d, h, n, far, roleA, roleB)
	case roleB:
		side(&d, h, n, far, roleB, roleA)
	default:
		common(&d, h, n, far)
	}
	flush(l.w, &d, s, emit)
	h.out[role] += far
	for q := roleA; q <= roleC; q++ {
		h.edges[role][q] += n[q]
	}
}

// side adds the changes of a node w on one side only (own = its role, A or
// B), given n[q] = |N(w) ∩ Q| and far = |N(w) ∩ R|. With uv added, w is
//
//	the end of the new 3-path w–u–v;
//	the middle of the new 4-paths z–w–u–v, z ∈ R (far of them);
//	a leaf of the new 3-star around u with another non-adjacent own-side
//	node, or degree-2 in the new tailed triangle with an adjacent one;
//	the end of the new 4-path w–u–v–z with a non-adjacent other-side z,
//	or on the new 4-cycle replacing the 4-path u–w–z–v with an adjacent z;
//	turned from 4-path end w–u–z–v into tailed-triangle tail with a
//	non-adjacent common z, or from tailed triangle into diamond with an
//	adjacent one.
func side(d *[maxOrbits]int64, h *halo, n [numRoles]int64, far int64, own, other uint8) {
	apart := h.size[own] - 1 - n[own]
	across := h.size[other] - n[other]
	loose := h.size[roleC] - n[roleC]
	d[oPathEnd3]++
	d[oPathMid4] += far - n[other]
	d[oStarLeaf] += apart
	d[oTailDeg2] += n[own] - n[roleC]
	d[oPathEnd4] += across - loose
	d[oCycle] += n[other]
	d[oTailEnd] += loose
	d[oDiamondDeg2] += n[roleC]
}

// common adds the changes of a common neighbour w of u and v. With uv
// added, its 3-path u–w–v becomes a triangle; its 3-stars with a leaf
// z ∈ R become tailed triangles with w at degree 3; its 4-paths through
// u–w–v (with a one-sided z not adjacent to w) become tailed triangles with
// w at degree 2, and its tailed triangles (z adjacent) become diamonds with
// w at degree 3; its 4-cycles with another common non-adjacent z become
// diamonds with w at degree 2, and its diamonds (z adjacent) become K4s.
func common(d *[maxOrbits]int64, h *halo, n [numRoles]int64, far int64) {
	loose := h.size[roleA] - n[roleA] + h.size[roleB] - n[roleB]
	tied := n[roleA] + n[roleB]
	apart := h.size[roleC] - 1 - n[roleC]
	d[oPathMid3]--
	d[oTriangle]++
	d[oStarCentre] -= far
	d[oTailDeg3] += far - tied
	d[oPathMid4] -= loose
	d[oTailDeg2] += loose
	d[oDiamondDeg3] += tied - n[roleC]
	d[oCycle] -= apart
	d[oDiamondDeg2] += apart
	d[oClique] += n[roleC]
}

// endpoint4 adds the 4-node changes of endpoint u (own = u's side role,
// other = v's). With uv added, u gains or loses, per set {u,v,w,z}:
//
//	z ∈ R on w ∈ own side: middle of the 4-path z–w–u–v;
//	z ∈ R on w ∈ other side: end of the 4-path u–v–w–z;
//	z ∈ R on common w: 3-star leaf → tailed-triangle degree 2;
//	w, z own side: 3-star centre (apart) or tailed-triangle degree 3;
//	w, z other side: 3-star leaf (apart) or tailed-triangle tail;
//	w own, z other: 4-path middle (apart) or 4-path end → 4-cycle;
//	w own, z common: 4-path middle → tailed-triangle degree 3 (apart),
//	tailed-triangle degree 2 → diamond degree 3 (adjacent);
//	w other, z common: 4-path end → tailed-triangle degree 2 (apart),
//	tailed-triangle tail → diamond degree 2 (adjacent);
//	w, z common: 4-cycle → diamond degree 3 (apart), diamond degree 2 →
//	K4 (adjacent).
func endpoint4(d *[maxOrbits]int64, h *halo, own, other uint8) {
	a, b, c := h.size[own], h.size[other], h.size[roleC]
	eAA := h.edges[own][own] / 2
	eBB := h.edges[other][other] / 2
	eCC := h.edges[roleC][roleC] / 2
	eAB := h.edges[own][other]
	eAC := h.edges[own][roleC]
	eBC := h.edges[other][roleC]
	rC := h.out[roleC]

	d[oPathMid4] += h.out[own] + a*b - eAB - (a*c - eAC)
	d[oPathEnd4] += h.out[other] - eAB - (b*c - eBC)
	d[oStarLeaf] += b*(b-1)/2 - eBB - rC
	d[oStarCentre] += a*(a-1)/2 - eAA
	d[oTailDeg3] += eAA + a*c - eAC
	d[oTailEnd] += eBB - eBC
	d[oTailDeg2] += rC - eAC + b*c - eBC
	d[oCycle] += eAB - (c*(c-1)/2 - eCC)
	d[oDiamondDeg3] += eAC + c*(c-1)/2 - eCC
	d[oDiamondDeg2] += eBC - eCC
	d[oClique] += eCC
}
