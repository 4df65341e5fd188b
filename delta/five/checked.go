package five

import (
	"math"
	"math/bits"
)

// checked does int64 arithmetic that remembers an overflow instead of
// wrapping: a count too large for its type must surface as an error,
// never as a wrong number (DESIGN.md §5).
type checked struct{ overflow bool }

func (c *checked) add(a, b int64) int64 {
	s := a + b
	if (a > 0 && b > 0 && s < 0) || (a < 0 && b < 0 && s >= 0) {
		c.overflow = true
	}
	return s
}

func (c *checked) sub(a, b int64) int64 {
	if b == math.MinInt64 {
		c.overflow = true
		return 0
	}
	return c.add(a, -b)
}

func (c *checked) mul(a, b int64) int64 {
	if a == 0 || b == 0 {
		return 0
	}
	p := a * b
	if p/b != a || (a == -1 && b == math.MinInt64) || (b == -1 && a == math.MinInt64) {
		c.overflow = true
	}
	return p
}

// choose returns C(n, k) for k ≤ 4 and n ≥ 0 (0 when n < k). Each step
// r·(n−i)/(i+1) is exact (r = C(n, i) then) and is done in 128 bits, so
// only a result past 2^63−1 overflows.
func (c *checked) choose(n int64, k int) int64 {
	if n < int64(k) {
		return 0
	}
	r := uint64(1)
	for i := range uint64(k) {
		hi, lo := bits.Mul64(r, uint64(n)-i)
		if hi >= i+1 {
			c.overflow = true
			return 0
		}
		r, _ = bits.Div64(hi, lo, i+1)
	}
	if r > math.MaxInt64 {
		c.overflow = true
		return 0
	}
	return int64(r)
}
