package delta

import "testing"

// TestCountsCodec round-trips rows of counts through AppendCounts and
// DecodeCounts, and refuses what does not decode.
func TestCountsCodec(t *testing.T) {
	cases := [][]uint64{
		{0, 0, 0, 0},
		{1, 0, 0, 0},
		{0, 0, 0, 1 << 63},
		{^uint64(0), 127, 128, 0},
	}
	for _, c := range cases {
		b := AppendCounts(nil, c)
		got := []uint64{9, 9, 9, 9}
		if err := DecodeCounts(b, got); err != nil {
			t.Fatal(err)
		}
		for i := range c {
			if got[i] != c[i] {
				t.Fatalf("vector %v came back as %v", c, got)
			}
		}
	}
	if len(AppendCounts(nil, []uint64{0, 0, 0})) != 0 {
		t.Fatal("an all-zero vector is not stored empty")
	}
	if err := DecodeCounts(AppendCounts(nil, []uint64{1, 2, 3}), make([]uint64, 2)); err == nil {
		t.Fatal("a vector longer than the orbit count decoded")
	}
	if err := DecodeCounts([]byte{0x80}, make([]uint64, 2)); err == nil {
		t.Fatal("a truncated uvarint decoded")
	}
}
