package directed

// numCycleOrbits is the number of orbits of the 4-cycle family.
const numCycleOrbits = 45

// cycleSlots are a node's 4-cycle pattern counts, by position in the
// family's orbit list (equations.byFamily[fCycle]).
type cycleSlots [numCycleOrbits]uint64

// cycleTables map pairs of wedge types to 4-cycle slots. A wedge type is
// β = 3·(t1−1) + (t2−1) for a path n–m–o with t1 = type(n,m) and
// t2 = type(m,o). For a cycle found from its top node x with opposite z,
// one wedge x–y–z of type β and another x–w–z of type γ, the labelled
// tuples are, with ā the type seen from the other side:
//
//	atTop[β][γ]:      (x, y, z, w)  types (a1, b1, a2, b2)
//	atOpposite[β][γ]: (z, y, x, w)  types (b̄1, ā1, b̄2, ā2)
//	viaFirst[β][γ]:   (y, x, w, z)  types (ā1, a2, b1, b̄2)
//	viaSecond[β][γ]:  (y, z, w, x)  types (b1, b̄2, ā1, a2)
//
// in fCycle's parameter order; an entry is the slot when that tuple is
// its orbit's canonical form and −1 otherwise, so every cycle is counted
// once per labelled tuple of the canonical form (equations.go).
type cycleTables struct {
	orbits                                 [numCycleOrbits]int
	atTop, atOpposite, viaFirst, viaSecond [9][9]int8
}

func buildCycleTables(eq *equations) *cycleTables {
	if len(eq.byFamily[fCycle]) != numCycleOrbits {
		panic("directed: the 4-cycle family does not have 45 orbits")
	}
	t := &cycleTables{}
	local := map[int]int8{}
	for i, o := range eq.byFamily[fCycle] {
		t.orbits[i] = o
		local[o] = int8(i)
	}
	slot := func(params ...uint8) int8 {
		if o := eq.slotOf(fCycle, params...); o >= 0 {
			return local[o]
		}
		return -1
	}
	for b1 := range 9 {
		a1, z1 := uint8(b1/3+1), uint8(b1%3+1)
		for b2 := range 9 {
			a2, z2 := uint8(b2/3+1), uint8(b2%3+1)
			t.atTop[b1][b2] = slot(a1, z1, a2, z2)
			t.atOpposite[b1][b2] = slot(rev(z1), rev(a1), rev(z2), rev(a2))
			t.viaFirst[b1][b2] = slot(rev(a1), a2, z1, rev(z2))
			t.viaSecond[b1][b2] = slot(z1, rev(z2), rev(a1), a2)
		}
	}
	return t
}

// cycleScratch is one worker's state in the 4-cycle pass: its own slot
// counts for every node (summed over workers when a node is solved), the
// wedge counts to each z by type, their totals, and the z met.
type cycleScratch struct {
	slots []cycleSlots
	cn    [][9]uint32
	tot   []uint32
	seen  []uint32
}

// cycles counts the non-induced 4-cycles x–y–z–w–x once each, from their
// highest node x: the wedges x–y–z with y, z below x are counted per z by
// type, and every pair of distinct wedges to one z is a cycle. x and z
// get one labelled tuple per ordered pair of wedges (x's summed over z
// first), a middle y two tuples per other wedge (cycleTables). The work
// is Σ_x Σ_{y∈N(x), y<x} |N(y) ∩ [0,x)| (Chiba & Nishizeki 1985), twice,
// plus the credits; each worker writes its own slots, so no credit is
// atomic.
func (st *state) cycles() {
	s, t := st.s, st.eq.cycles
	n := s.numNodes()
	st.cyc = make([]*cycleScratch, workers())
	forEachNode(n, func(wk int, x uint32) {
		sc := st.cyc[wk]
		if sc == nil {
			sc = &cycleScratch{slots: make([]cycleSlots, n), cn: make([][9]uint32, n), tot: make([]uint32, n)}
			st.cyc[wk] = sc
		}
		cn, tot, acc := sc.cn, sc.tot, sc.slots
		seen := sc.seen[:0]
		s.forEachWedgeBelow(x, func(_, z uint32, a, b uint8) {
			if tot[z] == 0 {
				seen = append(seen, z)
			}
			tot[z]++
			cn[z][(a-1)*3+b-1]++
		})
		var top [9][9]uint64
		for _, z := range seen {
			if tot[z] < 2 {
				continue
			}
			c := &cn[z]
			var nz [9]uint8
			k := 0
			for b := range c {
				if c[b] != 0 {
					nz[k] = uint8(b)
					k++
				}
			}
			az := &acc[z]
			for _, b1 := range nz[:k] {
				for _, b2 := range nz[:k] {
					p := uint64(c[b1]) * uint64(c[b2])
					if b1 == b2 {
						p -= uint64(c[b1])
					}
					if p == 0 {
						continue
					}
					top[b1][b2] += p
					if o := t.atOpposite[b1][b2]; o >= 0 {
						az[o] += p
					}
				}
			}
		}
		ax := &acc[x]
		for b1 := range top {
			for b2, p := range top[b1] {
				if o := t.atTop[b1][b2]; p != 0 && o >= 0 {
					ax[o] += p
				}
			}
		}
		s.forEachWedgeBelow(x, func(y, z uint32, a, b uint8) {
			if tot[z] < 2 {
				return
			}
			c := &cn[z]
			mine := (a-1)*3 + b - 1
			ay := &acc[y]
			for b2, k := range c {
				if uint8(b2) == mine {
					k--
				}
				if k == 0 {
					continue
				}
				if o := t.viaFirst[mine][b2]; o >= 0 {
					ay[o] += uint64(k)
				}
				if o := t.viaSecond[mine][b2]; o >= 0 {
					ay[o] += uint64(k)
				}
			}
		})
		for _, z := range seen {
			cn[z] = [9]uint32{}
			tot[z] = 0
		}
		sc.seen = seen
	})
}

// addCycles adds rank x's 4-cycle pattern counts, summed over workers, to
// its pattern counts n.
func (st *state) addCycles(n []int64, x uint32) {
	t := st.eq.cycles
	for _, sc := range st.cyc {
		if sc == nil {
			continue
		}
		for i, v := range &sc.slots[x] {
			n[t.orbits[i]] += int64(v)
		}
	}
}
