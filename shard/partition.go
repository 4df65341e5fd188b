package shard

// OwnerOf returns the shard that owns node id among n shards:
// FNV-1a 64 of the id's bytes, mod n. Precondition: n ≥ 1.
func OwnerOf(node string, n int) int {
	if n < 1 {
		panic("shard: OwnerOf with fewer than one shard")
	}
	return int(fnv64a(fnvOffset, node) % uint64(n))
}

// fnv64a is FNV-1a 64 over b, continuing from h (start with fnvOffset);
// it allocates nothing.
func fnv64a(h uint64, b string) uint64 {
	for i := 0; i < len(b); i++ {
		h ^= uint64(b[i])
		h *= fnvPrime
	}
	return h
}

const (
	fnvOffset = 14695981039346656037
	fnvPrime  = 1099511628211
)
