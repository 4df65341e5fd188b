package parallel

import (
	"sync/atomic"
	"testing"
)

// TestForEachVisitsEveryNodeOnce counts the calls per node and checks the
// worker indices, for sizes around the chunk.
func TestForEachVisitsEveryNodeOnce(t *testing.T) {
	for _, n := range []int{0, 1, 63, 64, 65, 1000} {
		hits := make([]atomic.Int32, n)
		var badWorker atomic.Bool
		ForEach(n, 64, func(w int, x uint32) {
			if w < 0 || w >= Workers() {
				badWorker.Store(true)
			}
			hits[x].Add(1)
		})
		for x := range hits {
			if h := hits[x].Load(); h != 1 {
				t.Fatalf("n=%d: node %d visited %d times", n, x, h)
			}
		}
		if badWorker.Load() {
			t.Fatalf("n=%d: worker index outside 0..%d", n, Workers()-1)
		}
	}
}
