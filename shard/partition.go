package shard

import (
	"strconv"
)

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

// EdgeShard returns the shard that computes the orbit changes of the edge
// between a and b among n shards: FNV-1a 64 over the length of the smaller
// id (4 bytes, little-endian), the smaller id and the larger id, mod n. The pair is unordered for every kind (an arc and
// its reverse go to one shard), so the choice never depends on direction.
func EdgeShard(a, b string, n int) int {
	if n < 1 {
		panic("shard: EdgeShard with fewer than one shard")
	}
	if b < a {
		a, b = b, a
	}
	h := uint64(fnvOffset)
	for i := range 4 {
		h ^= uint64(byte(len(a) >> (8 * i)))
		h *= fnvPrime
	}
	h = fnv64a(h, a)
	h = fnv64a(h, b)
	return int(h % uint64(n))
}

// ReadSubject is the NATS subject on which the worker of shard i of a
// deployment answers node reads (ReadRequest as JSON; the reply is
// {"status": HTTP code, "reply": ReadReply}): <log subject>.<deployment>.read.<i>.
func ReadSubject(subject, deployment string, i int) string {
	return subject + "." + deployment + ".read." + strconv.Itoa(i)
}
