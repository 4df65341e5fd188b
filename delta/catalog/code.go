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

// codeBits returns the number of code bits of a k-node tuple: k(k−1)/2 for
// undirected graphs, k(k−1) for directed ones.
func codeBits(kind delta.Kind, k int) int {
	if kind == delta.Directed {
		return k * (k - 1)
	}
	return k * (k - 1) / 2
}

// arc is one code bit and the ordered pair of positions it joins. For
// undirected codes each bit is listed once with i < j.
type arc struct {
	bit  uint
	i, j int
}

// arcsOf lists the code bits of a k-node tuple in bit order.
func arcsOf(kind delta.Kind, k int) []arc {
	var out []arc
	for b := 1; b < k; b++ {
		for a := 0; a < b; a++ {
			if kind == delta.Directed {
				out = append(out, arc{ArcBit(a, b), a, b}, arc{ArcBit(b, a), b, a})
			} else {
				out = append(out, arc{PairBit(a, b), a, b})
			}
		}
	}
	return out
}

// bitFor returns the code bit of the edge or arc i→j for the kind.
func bitFor(kind delta.Kind, i, j int) uint {
	if kind == delta.Directed {
		return ArcBit(i, j)
	}
	return PairBit(i, j)
}

// permute returns the code of the tuple relabelled by p: position i of the
// old tuple becomes position p[i], so edge (i,j) becomes (p[i],p[j]).
func permute(kind delta.Kind, arcs []arc, code uint32, p []int) uint32 {
	var out uint32
	for _, a := range arcs {
		if code>>a.bit&1 != 0 {
			out |= 1 << bitFor(kind, p[a.i], p[a.j])
		}
	}
	return out
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
// (for undirected codes both are the degree).
func degrees(kind delta.Kind, arcs []arc, k int, code uint32) (out, in []int) {
	out, in = make([]int, k), make([]int, k)
	for _, a := range arcs {
		if code>>a.bit&1 == 0 {
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
// either order) or arcs i→j (directed), given as tuple positions. Positions
// must be distinct and below 5.
func Code(kind delta.Kind, edges [][2]int) uint32 {
	var code uint32
	for _, e := range edges {
		if e[0] >= maxK || e[1] >= maxK {
			panic("catalog: Code position out of range")
		}
		code |= 1 << bitFor(kind, e[0], e[1])
	}
	return code
}
