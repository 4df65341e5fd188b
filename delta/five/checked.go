package five

import "math"

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

// choose returns C(n, k) for k ≤ 4 and n ≥ 0 (0 when n < k), computed
// so that intermediate products overflow only when the result does or
// nearly does.
func (c *checked) choose(n int64, k int) int64 {
	if n < int64(k) {
		return 0
	}
	r := int64(1)
	for i := range int64(k) {
		// r·(n−i) is divisible by i+1 after the previous steps.
		r = c.mul(r, n-i) / (i + 1)
	}
	return r
}
