package catalog

import "orbitwatch/delta"

// PairBit returns the bit of the undirected adjacency code that holds the
// edge between tuple positions i and j (i != j, either order): with a < b
// the bit is b(b−1)/2 + a. The layout is prefix-compatible: the code of
// positions 0..k−2 is the low (k−1)(k−2)/2 bits of the code of 0..k−1.
func PairBit(i, j int) uint {
	if i == j || i < 0 || j < 0 {
		panic("catalog: PairBit of equal or negative positions")
	}
	a, b := min(i, j), max(i, j)
	return uint(b*(b-1)/2 + a)
}

// ArcBit returns the bit of the directed adjacency code that holds the arc
// i→j (i != j): with a = min(i,j), b = max(i,j) and pair index
// p = b(b−1)/2 + a, the arc a→b is bit 2p and b→a is bit 2p+1. The layout
// is prefix-compatible like PairBit's.
func ArcBit(i, j int) uint {
	p := PairBit(i, j)
	if i < j {
		return 2 * p
	}
	return 2*p + 1
}

// SignedBits returns the bits of the signed adjacency code that hold the
// pair of tuple positions i and j (i != j, either order): with
// p = PairBit(i, j), bit 2p says the pair is an edge and bit 2p+1 that the
// edge is negative. A code with bit 2p+1 set and bit 2p clear is not a
// graph. The layout is prefix-compatible like PairBit's, and it is
// ArcBit's: the edge bit is where ArcBit(a, b) is for a < b, the sign bit
// where ArcBit(b, a) is.
func SignedBits(i, j int) (edge, neg uint) {
	p := PairBit(i, j)
	return 2 * p, 2*p + 1
}

// SignedCode returns the signed adjacency code of a tuple from its edges
// (either order) and their signs (neg[i] for edges[i]), as tuple
// positions. Positions must be distinct and below 5.
func SignedCode(edges [][2]int, neg []bool) uint32 {
	if len(neg) != len(edges) {
		panic("catalog: SignedCode with a sign count other than the edge count")
	}
	var code uint32
	for i, e := range edges {
		if e[0] >= maxK || e[1] >= maxK {
			panic("catalog: SignedCode position out of range")
		}
		eb, nb := SignedBits(e[0], e[1])
		code |= 1 << eb
		if neg[i] {
			code |= 1 << nb
		}
	}
	return code
}

// codeBits returns the number of code bits of a k-node tuple: k(k−1)/2 for
// undirected graphs, k(k−1) for directed and signed ones.
func codeBits(kind delta.Kind, k int) int {
	if kind != delta.Undirected {
		return k * (k - 1)
	}
	return k * (k - 1) / 2
}

// arc is one code bit and the ordered pair of positions it joins. For
// undirected codes each bit is listed once with i < j; for signed codes
// each pair's edge bit and then its sign bit (neg), with i < j.
type arc struct {
	bit  uint
	i, j int
	neg  bool
}

// arcsOf lists the code bits of a k-node tuple in bit order.
func arcsOf(kind delta.Kind, k int) []arc {
	var out []arc
	for b := 1; b < k; b++ {
		for a := 0; a < b; a++ {
			switch kind {
			case delta.Directed:
				out = append(out, arc{ArcBit(a, b), a, b, false}, arc{ArcBit(b, a), b, a, false})
			case delta.Signed:
				eb, nb := SignedBits(a, b)
				out = append(out, arc{eb, a, b, false}, arc{nb, a, b, true})
			default:
				out = append(out, arc{PairBit(a, b), a, b, false})
			}
		}
	}
	return out
}

// bitFor returns the code bit of the edge or arc i→j for the kind; for a
// signed code the edge bit, or the sign bit when neg.
func bitFor(kind delta.Kind, i, j int, neg bool) uint {
	switch kind {
	case delta.Directed:
		return ArcBit(i, j)
	case delta.Signed:
		eb, nb := SignedBits(i, j)
		if neg {
			return nb
		}
		return eb
	}
	return PairBit(i, j)
}

// permute returns the code of the tuple relabelled by p: position i of the
// old tuple becomes position p[i], so edge (i,j) becomes (p[i],p[j]) with
// its sign.
func permute(kind delta.Kind, arcs []arc, code uint32, p []int) uint32 {
	var out uint32
	for _, a := range arcs {
		if code>>a.bit&1 != 0 {
			out |= 1 << bitFor(kind, p[a.i], p[a.j], a.neg)
		}
	}
	return out
}

// signsOnEdges reports whether every sign bit of a code sits on an edge
// (always true for unsigned kinds).
func signsOnEdges(kind delta.Kind, arcs []arc, code uint32) bool {
	if kind != delta.Signed {
		return true
	}
	for _, a := range arcs {
		if a.neg && code>>a.bit&1 != 0 && code>>(a.bit-1)&1 == 0 {
			return false
		}
	}
	return true
}

// connected reports whether the k-node code is (weakly) connected.
func connected(arcs []arc, k int, code uint32) bool {
	seen := 1
	for changed := true; changed; {
		changed = false
		for _, a := range arcs {
			if code>>a.bit&1 == 0 {
				continue
			}
			in, jn := seen>>a.i&1 != 0, seen>>a.j&1 != 0
			if in != jn {
				seen |= 1<<a.i | 1<<a.j
				changed = true
			}
		}
	}
	return seen == 1<<k-1
}

// degrees returns, per position, the out-degree and in-degree of a code
// (for undirected codes both are the degree; for signed codes out is the
// degree and in the number of negative ties).
func degrees(kind delta.Kind, arcs []arc, k int, code uint32) (out, in []int) {
	out, in = make([]int, k), make([]int, k)
	for _, a := range arcs {
		if code>>a.bit&1 == 0 {
			continue
		}
		if kind == delta.Signed {
			d := out
			if a.neg {
				d = in
			}
			d[a.i]++
			d[a.j]++
			continue
		}
		out[a.i]++
		in[a.j]++
		if kind == delta.Undirected {
			out[a.j]++
			in[a.i]++
		}
	}
	return out, in
}

// Code returns the adjacency code of a tuple from its edges (undirected,
// either order) or arcs i→j (directed), given as tuple positions; for a
// signed catalog the edges are positive (see SignedCode). Positions must
// be distinct and below 5.
func Code(kind delta.Kind, edges [][2]int) uint32 {
	var code uint32
	for _, e := range edges {
		if e[0] >= maxK || e[1] >= maxK {
			panic("catalog: Code position out of range")
		}
		code |= 1 << bitFor(kind, e[0], e[1], false)
	}
	return code
}
