package factored

import (
	"math/rand/v2"
	"slices"
	"testing"
)

// TestAdjacencyBlocks grows one list far past flatMax, shrinks it back
// below it and grows it again, with random ids, holding it at every step
// against a sorted slice: order, membership, the triangle count kept beside
// each id, and the block invariants (runs sorted, first ids right, no
// empty or oversized run).
func TestAdjacencyBlocks(t *testing.T) {
	rng := rand.New(rand.NewPCG(4, 4))
	var a adjacency
	want := map[uint32]uint32{}
	check := func(step int) {
		t.Helper()
		var got []uint32
		for it := a.runs(); it.next(); {
			for i, y := range it.nbr {
				got = append(got, y)
				if it.tri[i] != want[y] {
					t.Fatalf("step %d: id %d holds %d, want %d", step, y, it.tri[i], want[y])
				}
			}
		}
		keys := slices.Sorted(func(yield func(uint32) bool) {
			for k := range want {
				if !yield(k) {
					return
				}
			}
		})
		if !slices.Equal(got, keys) || a.size() != len(keys) {
			t.Fatalf("step %d: %d ids (size %d), want %d", step, len(got), a.size(), len(keys))
		}
		if b := a.blk; b != nil {
			for k := range b.nbr {
				if len(b.nbr[k]) == 0 || len(b.nbr[k]) > blockMax || b.first[k] != b.nbr[k][0] {
					t.Fatalf("step %d: run %d of %d ids, first %d", step, k, len(b.nbr[k]), b.first[k])
				}
			}
		}
	}
	op := func(step int, grow bool) {
		y := uint32(rng.IntN(1 << 16))
		_, present := want[y]
		if present != a.has(y) {
			t.Fatalf("step %d: has(%d) = %v", step, y, a.has(y))
		}
		switch {
		case !present && grow:
			want[y] = uint32(step)
			a.insert(y, uint32(step))
		case present && !grow:
			delete(want, y)
			a.remove(y)
		case present:
			want[y]++
			*a.find(y) += 1
		}
	}
	step := 0
	for phase, target := range []int{3 * flatMax, flatMax / 4, 2 * flatMax} {
		for len(want) != target {
			op(step, len(want) < target)
			step++
			if step%997 == 0 {
				check(step)
			}
		}
		check(step)
		if (a.blk != nil) != (target > flatMax) {
			t.Fatalf("phase %d: %d ids, blocked %v", phase, target, a.blk != nil)
		}
	}
}
