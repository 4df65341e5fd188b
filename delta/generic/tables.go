package generic

import (
	"orbitwatch/delta"
	"orbitwatch/delta/catalog"
)

// maxNodes is the largest graphlet size any catalog holds.
const maxNodes = 5

// change is one orbit change of one member of a node set when the edge
// between positions 0 and 1 appears: the member at position pos leaves or
// enters orbit; d is +1 for the orbit held with the edge, −1 for the one
// held without it.
type change struct {
	pos   uint8
	d     int8
	orbit int32
}

// tables holds what the engines precompute from a catalog.
//
// For a set of m members with tuple positions 0..m−1, where u is at 0 and v
// at 1, code is the adjacency code of the induced subgraph with the bit of
// the changing edge u→v (or {u,v}) cleared. changes[m][start[m][code]:
// start[m][code+1]] are the member orbit changes from the subgraph without
// the edge to the one with it; a member whose orbit is the same in both is
// not listed, and a subgraph that is disconnected without the edge
// contributes only +1 entries. The changes of the newest member, position
// m−1, come first and end at mid[m][code].
//
// For a Signed graph the code keeps the sign bit of the changing edge:
// the entries of a code with it are those of a negative edge appearing
// (the code without the edge drops it too), so one table serves both
// signs.
//
// outBits[p][mask] is the code of the arcs q→p (undirected, signed: edges
// {q,p}) for every position q in mask; inBits[p][mask] the code of the
// arcs p→q (signed: the sign bits of the edges {q,p}).
type tables struct {
	kind    delta.Kind
	k       int
	orbits  int
	edgeBit uint32 // code bit of u→v, or of {u,v}
	signBit uint32 // Signed: code bit of {u,v} being negative; else 0
	start   [maxNodes + 1][]uint32
	mid     [maxNodes + 1][]uint32
	changes [maxNodes + 1][]change
	outBits [maxNodes][1 << maxNodes]uint32
	inBits  [maxNodes][1 << maxNodes]uint32
}

// newTables derives the engine tables of cat; it panics on a catalog whose
// size is outside 2..5.
func newTables(cat *catalog.Catalog) *tables {
	k := cat.MaxNodes
	if k < 2 || k > maxNodes {
		panic("generic: catalog size outside 2..5")
	}
	t := &tables{kind: cat.Kind, k: k, orbits: cat.NumOrbits()}
	directed, signed := cat.Kind == delta.Directed, cat.Kind == delta.Signed
	bit := func(i, j int) uint32 {
		switch {
		case directed:
			return 1 << catalog.ArcBit(i, j)
		case signed:
			eb, _ := catalog.SignedBits(i, j)
			return 1 << eb
		}
		return 1 << catalog.PairBit(i, j)
	}
	negBit := func(i, j int) uint32 {
		_, nb := catalog.SignedBits(i, j)
		return 1 << nb
	}
	t.edgeBit = bit(0, 1)
	if signed {
		t.signBit = negBit(0, 1)
	}
	for p := 0; p < maxNodes; p++ {
		for mask := 0; mask < 1<<maxNodes; mask++ {
			for q := 0; q < maxNodes; q++ {
				if mask&(1<<q) == 0 || q == p {
					continue
				}
				t.outBits[p][mask] |= bit(q, p)
				if directed {
					t.inBits[p][mask] |= bit(p, q)
				}
				if signed {
					t.inBits[p][mask] |= negBit(q, p)
				}
			}
		}
	}
	for m := 2; m <= k; m++ {
		bits := m * (m - 1) / 2
		if directed || signed {
			bits *= 2
		}
		n := uint32(1) << bits
		start, mid := make([]uint32, n+1), make([]uint32, n)
		var list []change
		for code := uint32(0); code < n; code++ {
			start[code] = uint32(len(list))
			mid[code] = start[code]
			if code&t.edgeBit != 0 {
				continue
			}
			gWith, with := cat.Lookup(m, code|t.edgeBit)
			gWithout, without := cat.Lookup(m, code&^t.signBit)
			if gWith < 0 {
				continue
			}
			for j := 0; j < m; j++ {
				i := (m - 1 + j) % m // the newest member first
				if gWithout >= 0 && without[i] == with[i] {
					continue
				}
				if gWithout >= 0 {
					list = append(list, change{pos: uint8(i), d: -1, orbit: int32(without[i])})
				}
				list = append(list, change{pos: uint8(i), d: +1, orbit: int32(with[i])})
				if i == m-1 {
					mid[code] = uint32(len(list))
				}
			}
		}
		start[n] = uint32(len(list))
		t.start[m], t.mid[m], t.changes[m] = start, mid, list
	}
	return t
}

// newest returns the changes of member m−1 of an m-member set with code
// code (without the changing edge); older returns those of members 0..m−2.
func (t *tables) newest(m int, code uint32) []change {
	return t.changes[m][t.start[m][code]:t.mid[m][code]]
}

func (t *tables) older(m int, code uint32) []change {
	return t.changes[m][t.mid[m][code]:t.start[m][code+1]]
}

// all returns the changes of every member.
func (t *tables) all(m int, code uint32) []change {
	return t.changes[m][t.start[m][code]:t.start[m][code+1]]
}

// emitSet emits the changes of the m-member set nodes[:m] whose code
// without the changing edge is code, each multiplied by sign (+1 insert,
// −1 delete). code must not hold edgeBit.
func (t *tables) emitSet(m int, code uint32, nodes *[maxNodes]uint32, sign int64, emit delta.Emit) {
	for _, c := range t.all(m, code) {
		emit(nodes[c.pos], int(c.orbit), int64(c.d)*sign)
	}
}
