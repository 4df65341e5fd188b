package shard

import (
	"encoding/binary"
	"errors"
	"fmt"
	"slices"
)

// shuffleVersion is the first byte of a shuffle message.
const shuffleVersion = 1

// A shuffle message carries the orbit changes one origin shard computed in
// one batch for the nodes of one owner shard, summed per (node, orbit).
// Layout, all integers varints (encoding/binary):
//
//	byte     1 (version)
//	uvarint  origin shard
//	uvarint  owner shard
//	uvarint  batch: the log sequence the batch ends at
//	uvarint  dictionary size at the batch end (every shard interns the
//	         same ids in the same order, so dense ids agree; the owner
//	         checks this)
//	uvarint  number of changes, then for each in increasing (node, orbit):
//	uvarint  node (dense id), uvarint orbit, varint change (not 0)
//
// Its message id is shuffleID(stream, batch, origin, owner), so a resend
// of the same batch is dropped by the server as a duplicate.
type shuffleMsg struct {
	origin, owner int
	batch         uint64
	nodes         uint64
	changes       []change
	streamSeq     uint64 // where the owner read it in the shuffle stream
}

type change struct {
	node  uint32
	orbit int
	d     int64
}

func shuffleID(stream string, batch uint64, origin, owner int) string {
	return fmt.Sprintf("%s/b%d/o%d/t%d", stream, batch, origin, owner)
}

// outbox sums an origin's orbit changes per owner during one batch. Its
// maps and buffers are reused from batch to batch, so adding a change
// allocates nothing once they have grown.
type outbox struct {
	sums []map[uint64]int64 // per owner: node<<16 | orbit → summed change
	keys []uint64
}

func newOutbox(shards int) *outbox {
	o := &outbox{sums: make([]map[uint64]int64, shards)}
	for i := range o.sums {
		o.sums[i] = make(map[uint64]int64)
	}
	return o
}

// add sums change d of (x, o) for owner; o must be below 1<<16.
func (b *outbox) add(owner int, x uint32, o int, d int64) {
	b.sums[owner][uint64(x)<<16|uint64(o)] += d
}

// encode appends owner's message of this batch to dst and forgets owner's
// sums. Zero sums are left out.
func (b *outbox) encode(dst []byte, origin, owner int, batch, nodes uint64) []byte {
	m := b.sums[owner]
	b.keys = b.keys[:0]
	for k, d := range m {
		if d != 0 {
			b.keys = append(b.keys, k)
		}
	}
	slices.Sort(b.keys)
	dst = append(dst, shuffleVersion)
	dst = binary.AppendUvarint(dst, uint64(origin))
	dst = binary.AppendUvarint(dst, uint64(owner))
	dst = binary.AppendUvarint(dst, batch)
	dst = binary.AppendUvarint(dst, nodes)
	dst = binary.AppendUvarint(dst, uint64(len(b.keys)))
	for _, k := range b.keys {
		dst = binary.AppendUvarint(dst, k>>16)
		dst = binary.AppendUvarint(dst, k&0xffff)
		dst = binary.AppendVarint(dst, m[k])
	}
	clear(m)
	return dst
}

// decodeShuffle reads a shuffle message; the error says what is wrong.
func decodeShuffle(b []byte) (shuffleMsg, error) {
	if len(b) == 0 || b[0] != shuffleVersion {
		return shuffleMsg{}, errors.New("not a version 1 shuffle message")
	}
	r := varintReader{b: b[1:]}
	m := shuffleMsg{origin: int(r.uvarint()), owner: int(r.uvarint()), batch: r.uvarint(), nodes: r.uvarint()}
	n := r.uvarint()
	if r.err == nil && n > uint64(len(r.b)) {
		return shuffleMsg{}, fmt.Errorf("shuffle message claims %d changes in %d bytes", n, len(r.b))
	}
	m.changes = make([]change, 0, n)
	for i := uint64(0); i < n && r.err == nil; i++ {
		x, o, d := r.uvarint(), r.uvarint(), r.varint()
		if x > 1<<32-1 || o > 0xffff || d == 0 {
			return shuffleMsg{}, fmt.Errorf("shuffle message change %d out of range", i)
		}
		m.changes = append(m.changes, change{uint32(x), int(o), d})
	}
	if r.err == nil && len(r.b) != 0 {
		r.err = errors.New("trailing bytes")
	}
	if r.err != nil {
		return shuffleMsg{}, fmt.Errorf("shuffle message: %w", r.err)
	}
	return m, nil
}
