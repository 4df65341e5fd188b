package delta

import (
	"slices"
	"testing"
)

// Ids set across word boundaries come back once each, in increasing
// order, and a drained set is empty.
func TestBits(t *testing.T) {
	var b Bits
	b.Grow(130)
	if len(b) != 3 {
		t.Fatalf("grown to 130 ids: %d words, want 3", len(b))
	}
	for _, x := range []uint32{129, 0, 64, 63, 64, 5} {
		b.Set(x)
	}
	var got []uint32
	b.Drain(func(x uint32) { got = append(got, x) })
	if want := []uint32{0, 5, 63, 64, 129}; !slices.Equal(got, want) {
		t.Fatalf("drained %v, want %v", got, want)
	}
	b.Drain(func(x uint32) { t.Fatalf("%d left after a drain", x) })
	b.Grow(10) // never shrinks
	if len(b) != 3 {
		t.Fatalf("grown to 10 ids after 130: %d words", len(b))
	}
}
