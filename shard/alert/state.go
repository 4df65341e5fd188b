package alert

import (
	"encoding/binary"
	"errors"
	"fmt"
	"math"
	"slices"
)

// stateMagic starts a serialised Evaluator state; the digit is the format
// version.
const stateMagic = "owalert1"

// MarshalBinary serialises the Evaluator's state: counters, the rate
// window and every node's rule states and decayed average, nodes in id
// order so equal states give equal bytes. Rule states are keyed by rule
// name, so a restored Evaluator may have rules added, removed or
// reordered.
//
//	magic "owalert1", uvarint orbits, byte baseline mode,
//	varint minute, uvarint inMinute, 5 × uvarint stats,
//	uvarint #rules, per rule: uvarint len, name,
//	uvarint #nodes, per node: uvarint len, id, byte hasAvg,
//	  [varint avgAt, orbits × float64 bits (8 bytes LE), orbits × uvarint prev],
//	  per rule: byte flags (1 fired, 2 hasLast), [varint last]
func (e *Evaluator) MarshalBinary() ([]byte, error) {
	b := []byte(stateMagic)
	b = binary.AppendUvarint(b, uint64(len(e.base)))
	b = append(b, byte(e.cfg.Baseline))
	b = binary.AppendVarint(b, e.minute)
	b = binary.AppendUvarint(b, uint64(e.inMinute))
	s := e.stats
	for _, x := range []uint64{s.Cuts, s.Nodes, s.Emitted, s.Held, s.Cooled} {
		b = binary.AppendUvarint(b, x)
	}
	b = binary.AppendUvarint(b, uint64(len(e.cfg.Rules)))
	for _, r := range e.cfg.Rules {
		b = appendString(b, r.Name)
	}
	ids := make([]string, 0, len(e.nodes))
	for id := range e.nodes {
		ids = append(ids, id)
	}
	slices.Sort(ids)
	b = binary.AppendUvarint(b, uint64(len(ids)))
	for _, id := range ids {
		st := e.nodes[id]
		b = appendString(b, id)
		if st.avg == nil {
			b = append(b, 0)
		} else {
			b = append(b, 1)
			b = binary.AppendVarint(b, st.avgAt)
			for _, x := range st.avg {
				b = binary.LittleEndian.AppendUint64(b, math.Float64bits(x))
			}
			for _, c := range st.prev {
				b = binary.AppendUvarint(b, c)
			}
		}
		for ri := range e.cfg.Rules {
			var rs ruleState
			if st.rules != nil {
				rs = st.rules[ri]
			}
			var f byte
			if rs.fired {
				f |= 1
			}
			if rs.hasLast {
				f |= 2
			}
			b = append(b, f)
			if rs.hasLast {
				b = binary.AppendVarint(b, rs.last)
			}
		}
	}
	return b, nil
}

func appendString(b []byte, s string) []byte {
	return append(binary.AppendUvarint(b, uint64(len(s))), s...)
}

// UnmarshalBinary replaces the Evaluator's state with one written by
// MarshalBinary, keeping its own Config. The orbit count and baseline mode
// must match; rule states of rules this Config does not have are dropped,
// and its rules the state does not know start armed. A malformed state is
// an error and leaves the Evaluator unchanged.
func (e *Evaluator) UnmarshalBinary(data []byte) error {
	r := &reader{b: data}
	if len(data) < len(stateMagic) || string(data[:len(stateMagic)]) != stateMagic {
		return errors.New("alert: state: not an evaluator state (bad magic)")
	}
	r.b = r.b[len(stateMagic):]
	if n := r.uvarint(); r.err == nil && n != uint64(len(e.base)) {
		return fmt.Errorf("alert: state: %d orbits, the evaluator has %d", n, len(e.base))
	}
	if m := r.byte(); r.err == nil && BaselineMode(m) != e.cfg.Baseline {
		return fmt.Errorf("alert: state: baseline mode %v, the evaluator's is %v", BaselineMode(m), e.cfg.Baseline)
	}
	minute, inMinute := r.varint(), int(r.uvarint())
	var s Stats
	for _, p := range []*uint64{&s.Cuts, &s.Nodes, &s.Emitted, &s.Held, &s.Cooled} {
		*p = r.uvarint()
	}
	nr := r.count(1)
	index := make([]int, nr) // state rule → rule of this config, −1 if gone
	for i := range index {
		name := r.string()
		index[i] = slices.IndexFunc(e.cfg.Rules, func(x Rule) bool { return x.Name == name })
	}
	nn := r.count(2)
	nodes := make(map[string]*nodeState, nn)
	for range nn {
		id := r.string()
		st := &nodeState{}
		if r.byte() == 1 {
			st.avgAt = r.varint()
			st.avg = make([]float64, len(e.base))
			for i := range st.avg {
				st.avg[i] = math.Float64frombits(r.uint64())
			}
			st.prev = make([]uint64, len(e.base))
			for i := range st.prev {
				st.prev[i] = r.uvarint()
			}
		}
		for i := range nr {
			f := r.byte()
			var rs ruleState
			rs.fired, rs.hasLast = f&1 != 0, f&2 != 0
			if rs.hasLast {
				rs.last = r.varint()
			}
			if index[i] >= 0 {
				if st.rules == nil {
					st.rules = make([]ruleState, len(e.cfg.Rules))
				}
				st.rules[index[i]] = rs
			}
		}
		if r.err == nil {
			if _, dup := nodes[id]; dup {
				return fmt.Errorf("alert: state: node %q stored twice", id)
			}
		}
		nodes[id] = st
	}
	if r.err == nil && len(r.b) != 0 {
		r.err = fmt.Errorf("%d trailing bytes", len(r.b))
	}
	if r.err != nil {
		return fmt.Errorf("alert: state: %w", r.err)
	}
	e.minute, e.inMinute, e.stats, e.nodes = minute, inMinute, s, nodes
	return nil
}

// reader decodes a state; the first error sticks and later reads return
// zero values.
type reader struct {
	b   []byte
	err error
}

func (r *reader) fail(what string) {
	if r.err == nil {
		r.err = fmt.Errorf("truncated or malformed %s", what)
	}
	r.b = nil
}

func (r *reader) uvarint() uint64 { return readVar(r, binary.Uvarint, "uvarint") }
func (r *reader) varint() int64   { return readVar(r, binary.Varint, "varint") }

func readVar[T any](r *reader, dec func([]byte) (T, int), what string) T {
	x, n := dec(r.b)
	if n <= 0 {
		r.fail(what)
		var zero T
		return zero
	}
	r.b = r.b[n:]
	return x
}

func (r *reader) byte() byte {
	if len(r.b) < 1 {
		r.fail("byte")
		return 0
	}
	c := r.b[0]
	r.b = r.b[1:]
	return c
}

func (r *reader) uint64() uint64 {
	if len(r.b) < 8 {
		r.fail("float")
		return 0
	}
	x := binary.LittleEndian.Uint64(r.b)
	r.b = r.b[8:]
	return x
}

// count reads a length whose items take at least min bytes each, so a
// corrupt length cannot make a huge allocation.
func (r *reader) count(min int) int {
	n := r.uvarint()
	if n > uint64(len(r.b)/min) {
		r.fail("length")
		return 0
	}
	return int(n)
}

func (r *reader) string() string {
	n := r.count(1)
	if r.err != nil {
		return ""
	}
	s := string(r.b[:n])
	r.b = r.b[n:]
	return s
}
