package gdv

import (
	"math"
	"testing"
)

// TestTableMatchesLogs: the tabled logarithms of small counts give the
// bits the logarithms give, so a count's signature does not depend on
// whether it was looked up.
func TestTableMatchesLogs(t *testing.T) {
	m := NewMetric([]float64{1, 0.3, 0.7})
	for c := range smallCount + 5 {
		x := float64(c)
		for i := range m.w {
			l, w := m.pair(i, x)
			if l != float32(math.Log1p(x)) || w != float32(m.w[i]/math.Log(x+2)) {
				t.Fatalf("count %d orbit %d: table gives (%v, %v), logarithms (%v, %v)",
					c, i, l, w, float32(math.Log1p(x)), float32(m.w[i]/math.Log(x+2)))
			}
		}
	}
}
