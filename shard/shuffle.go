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
//	uvarint  part number, from 0: a message larger than the server's
//	         maximum payload is sent in parts
//	byte     1 on the last part, else 0
//	uvarint  number of changes, then for each in increasing (node, orbit):
//	uvarint  node (dense id), uvarint orbit, varint change (not 0)
//
// Its message id is shuffleID(deployment, batch, origin, owner, part), so a
// resend of the same batch is dropped by the server as a duplicate.
type shuffleMsg struct {
	origin, owner int
	batch         uint64
	nodes         uint64
	part          int
	last          bool
	changes       []change
	streamSeq     uint64 // where the owner read it in the shuffle stream
}

type change struct {
	node  uint32
	orbit int
	d     int64
}

func shuffleID(deployment string, batch uint64, origin, owner, part int) string {
	return fmt.Sprintf("%s/b%d/o%d/t%d/p%d", deployment, batch, origin, owner, part)
}

// sums holds summed orbit changes per (node, orbit) in a dense node-major
// array, with epoch marks to tell which nodes have any in the current round.
// Adding a change is an array add; it allocates only when a new node id
// grows the arrays.
type sums struct {
	orbits int
	v      []int64
	mark   []uint32 // mark[x] == epoch: x has changes this round
	epoch  uint32
}

func newSums(orbits int) sums { return sums{orbits: orbits, epoch: 1} }

// add sums d into (x, o) and reports whether x is new this round.
func (s *sums) add(x uint32, o int, d int64) bool {
	if int(x) >= len(s.mark) {
		n := max(int(x)+1, 2*len(s.mark))
		s.mark = append(s.mark, make([]uint32, n-len(s.mark))...)
		s.v = append(s.v, make([]int64, n*s.orbits-len(s.v))...)
	}
	s.v[int(x)*s.orbits+o] += d
	if s.mark[x] == s.epoch {
		return false
	}
	s.mark[x] = s.epoch
	return true
}

// row returns x's summed changes; the caller zeroes them when done.
func (s *sums) row(x uint32) []int64 { return s.v[int(x)*s.orbits : int(x+1)*s.orbits] }

// next starts a new round. Every row used in this one must be zero again.
func (s *sums) next() { s.epoch++ }

// outbox sums an origin's orbit changes during one batch, with the nodes
// touched kept per owner. Its buffers are reused from batch to batch, so
// adding a change allocates nothing once they have grown.
type outbox struct {
	sums    sums
	touched [][]uint32 // per owner, in order of first change
	body    []byte
}

func newOutbox(shards, orbits int) *outbox {
	return &outbox{sums: newSums(orbits), touched: make([][]uint32, shards)}
}

// add sums change d of (x, o) for x's owner.
func (b *outbox) add(owner int, x uint32, o int, d int64) {
	if b.sums.add(x, o, d) {
		b.touched[owner] = append(b.touched[owner], x)
	}
}

// encode returns owner's message of this batch, in parts whose change
// lists stay within limit bytes (≥ 1), and zeroes owner's sums. Zero sums
// are left out. After every owner's message, call done.
func (b *outbox) encode(origin, owner int, batch, nodes uint64, limit int) [][]byte {
	xs := b.touched[owner]
	slices.Sort(xs)
	var parts [][]byte
	n := 0
	b.body = b.body[:0]
	flush := func(last bool) {
		m := make([]byte, 0, 32+len(b.body))
		m = append(m, shuffleVersion)
		m = binary.AppendUvarint(m, uint64(origin))
		m = binary.AppendUvarint(m, uint64(owner))
		m = binary.AppendUvarint(m, batch)
		m = binary.AppendUvarint(m, nodes)
		m = binary.AppendUvarint(m, uint64(len(parts)))
		if last {
			m = append(m, 1)
		} else {
			m = append(m, 0)
		}
		m = binary.AppendUvarint(m, uint64(n))
		parts = append(parts, append(m, b.body...))
		b.body, n = b.body[:0], 0
	}
	for _, x := range xs {
		row := b.sums.row(x)
		for o, d := range row {
			if d == 0 {
				continue
			}
			b.body = binary.AppendUvarint(b.body, uint64(x))
			b.body = binary.AppendUvarint(b.body, uint64(o))
			b.body = binary.AppendVarint(b.body, d)
			n++
			if len(b.body) >= limit {
				flush(false)
			}
		}
		clear(row)
	}
	flush(true)
	b.touched[owner] = xs[:0]
	return parts
}

// done ends the batch once every owner's message is encoded.
func (b *outbox) done() { b.sums.next() }

// decodeShuffle reads a shuffle message; the error says what is wrong.
func decodeShuffle(b []byte) (shuffleMsg, error) {
	if len(b) == 0 || b[0] != shuffleVersion {
		return shuffleMsg{}, errors.New("not a version 1 shuffle message")
	}
	r := varintReader{b: b[1:]}
	m := shuffleMsg{origin: int(r.uvarint()), owner: int(r.uvarint()), batch: r.uvarint(), nodes: r.uvarint(), part: int(r.uvarint())}
	if r.err == nil {
		if len(r.b) == 0 || r.b[0] > 1 {
			return shuffleMsg{}, errors.New("shuffle message: bad last-part flag")
		}
		m.last, r.b = r.b[0] == 1, r.b[1:]
	}
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
