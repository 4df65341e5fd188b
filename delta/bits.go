package delta

import "math/bits"

// Bits is a set of node ids, bit x%64 of word x/64: the counters keep the
// nodes whose records changed since their last Changed in one.
type Bits []uint64

// Grow makes room for the ids below n.
func (b *Bits) Grow(n int) {
	if words := (n + 63) / 64; len(*b) < words {
		*b = append(*b, make([]uint64, words-len(*b))...)
	}
}

// Set adds x, which must be below a size b was grown to.
func (b Bits) Set(x uint32) { b[x>>6] |= 1 << (x & 63) }

// Drain calls visit for every id in b, in increasing order, and empties
// b.
func (b Bits) Drain(visit func(x uint32)) {
	for w, word := range b {
		for ; word != 0; word &= word - 1 {
			visit(uint32(w<<6 + bits.TrailingZeros64(word)))
		}
	}
	clear(b)
}
