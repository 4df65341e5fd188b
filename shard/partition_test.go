package shard

import (
	"encoding/binary"
	"hash/fnv"
	"testing"
)

func TestOwnerOfIsFNV1a(t *testing.T) {
	// FNV-1a 64 test vectors from the FNV reference (Fowler, Noll, Vo;
	// recalled from memory): "" → cbf29ce484222325, "a" → af63dc4c8601ec8c.
	if got := fnv64a(fnvOffset, ""); got != 0xcbf29ce484222325 {
		t.Fatalf(`fnv64a("") = %x`, got)
	}
	if got := fnv64a(fnvOffset, "a"); got != 0xaf63dc4c8601ec8c {
		t.Fatalf(`fnv64a("a") = %x`, got)
	}
	// hash/fnv is the independent implementation held against ours.
	for _, id := range []string{"acct-0001", "shop-17", "\x00\xff", "ü"} {
		h := fnv.New64a()
		h.Write([]byte(id))
		for n := 1; n <= 7; n++ {
			if got, want := OwnerOf(id, n), int(h.Sum64()%uint64(n)); got != want {
				t.Fatalf("OwnerOf(%q, %d) = %d, want %d", id, n, got, want)
			}
		}
	}
}

func TestEdgeShard(t *testing.T) {
	for _, p := range [][2]string{{"a", "b"}, {"acct-1", "shop-2"}, {"ab", "c"}, {"a", "bc"}} {
		h := fnv.New64a()
		lo, hi := min(p[0], p[1]), max(p[0], p[1])
		var l [4]byte
		binary.LittleEndian.PutUint32(l[:], uint32(len(lo)))
		h.Write(l[:])
		h.Write([]byte(lo + hi))
		for n := 1; n <= 5; n++ {
			want := int(h.Sum64() % uint64(n))
			if got := EdgeShard(p[0], p[1], n); got != want {
				t.Fatalf("EdgeShard(%q, %q, %d) = %d, want %d", p[0], p[1], n, got, want)
			}
			if got := EdgeShard(p[1], p[0], n); got != want {
				t.Fatalf("EdgeShard is not symmetric for %q", p)
			}
		}
	}
	// The length prefix keeps "ab"+"c" and "a"+"bc" apart.
	same := 0
	for n := 2; n <= 40; n++ {
		if EdgeShard("ab", "c", n) == EdgeShard("a", "bc", n) {
			same++
		}
	}
	if same == 39 {
		t.Fatal(`EdgeShard does not tell {"ab","c"} from {"a","bc"}`)
	}
	if testing.AllocsPerRun(100, func() { EdgeShard("acct-1", "shop-2", 3) }) != 0 {
		t.Fatal("EdgeShard allocates")
	}
}
