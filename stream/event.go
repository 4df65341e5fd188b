package stream

import (
	"fmt"
	"strings"
	"time"
)

// Op is what an event does to its edge.
type Op uint8

const (
	// OpAdd adds one to the multiplicity of the edge.
	OpAdd Op = iota
	// OpRemove takes one from the multiplicity of the edge.
	OpRemove
)

// String returns "add" or "remove". It panics on any other value, which
// only a programmer error can make.
func (o Op) String() string {
	switch o {
	case OpAdd:
		return "add"
	case OpRemove:
		return "remove"
	}
	panic(fmt.Sprintf("stream: invalid Op %d", uint8(o)))
}

// Valid reports whether o is OpAdd or OpRemove.
func (o Op) Valid() bool { return o == OpAdd || o == OpRemove }

// parseOp reads an op cell: "add", "remove" in any letter case, or empty
// (= add).
func parseOp[T string | []byte](s T) (Op, bool) {
	switch {
	case len(s) == 0 || strings.EqualFold(string(s), "add"):
		return OpAdd, true
	case strings.EqualFold(string(s), "remove"):
		return OpRemove, true
	}
	return 0, false
}

// parseSign reads a sign cell: "+" or empty is positive, "-" negative.
func parseSign[T string | []byte](s T) (neg, ok bool) {
	switch string(s) {
	case "", "+":
		return false, true
	case "-":
		return true, true
	}
	return false, false
}

// Event is one edge event as decoded from a source or from the bus.
type Event struct {
	// ID identifies the event for de-duplication on the bus. From an id
	// column or key when the source has one, else derived (see doc.go).
	ID string
	// TS is the event time, in UTC; meaningful only when HasTS.
	TS    time.Time
	HasTS bool
	Op    Op
	// Neg is the event's sign: true for a negative tie (a dispute, a
	// chargeback), false for a positive one (a payment). A remove names
	// the sign of what it removes.
	Neg bool
	// Src and Dst are node ids, byte for byte as given (see CheckNodeID).
	Src, Dst string
	// Line is the event's position: in a source, its data record number
	// from 1 (the header and blank lines are not records; a rejected or
	// filtered record counts), which the commands use as the sequence
	// number; on the bus, the stream sequence.
	Line int
	// FileLine is the line of the source where the record is, counted as
	// an editor counts them: from 1, the header and blank lines included.
	// It is 0 for an event from the bus.
	FileLine int
}

// MaxIDBytes is the longest node id or event id accepted, in bytes. Real
// account ids are far shorter; the bound keeps every stored key well under
// the store's limits.
const MaxIDBytes = 1024

// CheckNodeID returns nil when s is a node id orbitwatch accepts: 1 to
// MaxIDBytes bytes of valid UTF-8 without a NUL byte. Two different byte
// strings must never look alike in JSON or on the page, which bytes that
// are not UTF-8 would (they all show as U+FFFD).
func CheckNodeID(s string) error {
	if r := nodeIDReason("node id", s); r != "" {
		return fmt.Errorf("stream: %s", r)
	}
	return nil
}

// nodeIDReason returns "" when s is a valid node id, else the reason,
// starting with key ("src", "dst").
func nodeIDReason[T string | []byte](key string, s T) string {
	switch {
	case len(s) == 0:
		return "empty " + key
	case len(s) > MaxIDBytes:
		return fmt.Sprintf("%s too long: %d bytes, the limit is %d", key, len(s), MaxIDBytes)
	}
	if i := indexByte(s, 0); i >= 0 {
		return fmt.Sprintf("%s contains a NUL byte: at byte %d", key, i+1)
	}
	if i := invalidUTF8(s); i >= 0 {
		return fmt.Sprintf("%s is not valid UTF-8: byte 0x%02x at byte %d", key, s[i], i+1)
	}
	return ""
}

// eventIDReason returns "" when s is a valid event id (empty means none:
// the reader derives one), else the reason. An event id travels in a
// message header, so control characters are refused besides what a node
// id refuses.
func eventIDReason[T string | []byte](s T) string {
	if len(s) == 0 {
		return ""
	}
	if r := nodeIDReason("id", s); r != "" {
		return r
	}
	for i := 0; i < len(s); i++ {
		if c := s[i]; c < 0x20 || c == 0x7f {
			return fmt.Sprintf("id contains a control character: byte 0x%02x at byte %d", c, i+1)
		}
	}
	return ""
}

// CheckEvent returns nil when e is an event the bus may carry: valid op,
// node ids that pass CheckNodeID, an event id that is empty or passes the
// same checks and has no control characters.
func CheckEvent(e Event) error {
	if !e.Op.Valid() {
		return fmt.Errorf("stream: invalid op %d", uint8(e.Op))
	}
	for _, r := range [...]string{nodeIDReason("src", e.Src), nodeIDReason("dst", e.Dst), eventIDReason(e.ID)} {
		if r != "" {
			return fmt.Errorf("stream: %s", r)
		}
	}
	return nil
}

func indexByte[T string | []byte](s T, c byte) int {
	for i := 0; i < len(s); i++ {
		if s[i] == c {
			return i
		}
	}
	return -1
}

// invalidUTF8 returns the index of the first byte that does not start a
// well-formed UTF-8 sequence (The Unicode Standard, table 3-7: no
// overlong forms, no surrogates, nothing above U+10FFFF), or -1.
func invalidUTF8[T string | []byte](s T) int {
	for i := 0; i < len(s); {
		c := s[i]
		if c < 0x80 {
			i++
			continue
		}
		n, lo, hi := 0, byte(0x80), byte(0xbf)
		switch {
		case c >= 0xc2 && c <= 0xdf:
			n = 2
		case c == 0xe0:
			n, lo = 3, 0xa0
		case c >= 0xe1 && c <= 0xec, c == 0xee, c == 0xef:
			n = 3
		case c == 0xed:
			n, hi = 3, 0x9f
		case c == 0xf0:
			n, lo = 4, 0x90
		case c >= 0xf1 && c <= 0xf3:
			n = 4
		case c == 0xf4:
			n, hi = 4, 0x8f
		default:
			return i
		}
		if i+n > len(s) || s[i+1] < lo || s[i+1] > hi {
			return i
		}
		for k := 2; k < n; k++ {
			if b := s[i+k]; b < 0x80 || b > 0xbf {
				return i
			}
		}
		i += n
	}
	return -1
}
