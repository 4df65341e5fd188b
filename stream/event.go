package stream

import (
	"errors"
	"fmt"
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

// parseOp reads an op cell: "add", "remove", or empty (= add).
func parseOp[T string | []byte](s T) (Op, bool) {
	switch string(s) {
	case "", "add":
		return OpAdd, true
	case "remove":
		return OpRemove, true
	}
	return 0, false
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
	// Src and Dst are node ids, byte for byte as given.
	Src, Dst string
	// Line is the 1-based data line (record) number within the source, or
	// the stream sequence on the bus.
	Line int
}

// msThreshold is where an integer time stops being Unix seconds and starts
// being Unix milliseconds: 1e11 seconds is the year 5138, 1e11 ms is 1973.
const msThreshold = 100_000_000_000

// ParseTime reads an event time: RFC 3339 with an optional fraction
// ("2026-03-01T09:30:00.25+01:00"), or a decimal Unix time with an optional
// sign and fraction ("1772353800", "1772353800.25", "1772353800250").
// A number whose integer part has magnitude ≥ 1e11 is milliseconds, else
// seconds; fraction digits beyond the nanosecond are cut. Exponents are
// not accepted. The time must fit int64 nanoseconds since 1970 (years
// 1678 to 2262). The result is in UTC.
func ParseTime(s string) (time.Time, error) { return parseTime(s) }

func parseTime[T string | []byte](s T) (time.Time, error) {
	if len(s) == 0 {
		return time.Time{}, errors.New("empty time")
	}
	if c := s[0]; c == '-' || c == '+' || (c >= '0' && c <= '9') {
		if t, ok := parseUnix(s); ok {
			return t, nil
		}
		if c == '-' || c == '+' {
			return time.Time{}, badTime(s)
		}
	}
	t, err := time.Parse(time.RFC3339Nano, string(s))
	if err != nil || !time.Unix(0, t.UnixNano()).Equal(t) {
		return time.Time{}, badTime(s)
	}
	return t.UTC(), nil
}

func badTime[T string | []byte](s T) error {
	return fmt.Errorf("bad time %q: want RFC 3339 or Unix seconds or milliseconds, years 1678 to 2262", s)
}

// parseUnix reads [sign]digits[.digits] exactly, without floating point.
func parseUnix[T string | []byte](s T) (time.Time, bool) {
	neg := false
	if s[0] == '-' || s[0] == '+' {
		neg = s[0] == '-'
		s = s[1:]
	}
	intPart, frac := s, s[:0]
	for i := 0; i < len(s); i++ {
		if s[i] == '.' {
			intPart, frac = s[:i], s[i+1:]
			if len(frac) == 0 {
				return time.Time{}, false
			}
			break
		}
	}
	// 18 digits cannot overflow int64 (< 1e18 < 2^63).
	if len(intPart) == 0 || len(intPart) > 18 {
		return time.Time{}, false
	}
	var whole int64
	for i := 0; i < len(intPart); i++ {
		c := intPart[i]
		if c < '0' || c > '9' {
			return time.Time{}, false
		}
		whole = whole*10 + int64(c-'0')
	}
	unit := int64(time.Second)
	if whole >= msThreshold {
		unit = int64(time.Millisecond)
	}
	if whole > (1<<63-1)/unit {
		return time.Time{}, false
	}
	// After the loops scale == unit, so fracNS is in nanoseconds.
	var fracNS, scale int64 = 0, 1
	for i := 0; i < len(frac); i++ {
		c := frac[i]
		if c < '0' || c > '9' {
			return time.Time{}, false
		}
		if scale < unit {
			fracNS = fracNS*10 + int64(c-'0')
			scale *= 10
		}
	}
	for scale < unit {
		fracNS *= 10
		scale *= 10
	}
	ns := whole*unit + fracNS
	if ns < whole*unit {
		return time.Time{}, false
	}
	if neg {
		ns = -ns
	}
	return time.Unix(0, ns).UTC(), true
}
