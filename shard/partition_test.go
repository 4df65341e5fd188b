package shard

import (
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
