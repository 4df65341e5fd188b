package stream

import (
	"errors"
	"fmt"
	"math/big"
	"strings"
	"time"
)

// msThreshold is where an integer time stops being Unix seconds and starts
// being Unix milliseconds: 1e11 seconds is the year 5138, 1e11 ms is 1973.
const msThreshold = 100_000_000_000

// ParseTime reads an event time in any of these forms:
//
//   - a date alone, "2026-03-01": midnight UTC;
//   - a date and a time of day, separated by "T" or a space, with minutes,
//     seconds and a fraction optional and a zone optional:
//     "2026-03-01T09:30:00.25+01:00" (RFC 3339), "2026-03-01 09:17:00"
//     (as database exports write it), "2026-03-01 09:17"; the zone is "Z",
//     "±hh:mm", "±hhmm" or "±hh", and without one the time is UTC;
//   - a decimal Unix time with an optional sign and fraction
//     ("1772353800", "1772353800.25", "1772353800250"): a number whose
//     integer part has magnitude ≥ 1e11 is milliseconds, else seconds.
//
// Fraction digits beyond the nanosecond are cut. Exponents are not
// accepted. The time must fit int64 nanoseconds since 1970 (years 1678 to
// 2262). The result is in UTC.
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
	t, ok := parseCalendar(s)
	if !ok {
		return time.Time{}, badTime(s)
	}
	return t, nil
}

func badTime[T string | []byte](s T) error {
	return fmt.Errorf("bad time %q: want a date (2026-03-01), a date and time (2026-03-01 09:17:00, RFC 3339) or Unix seconds or milliseconds, years 1678 to 2262", s)
}

// digits reads n decimal digits at s[i:], and reports whether there were.
func digits[T string | []byte](s T, i, n int) (int, bool) {
	if i+n > len(s) {
		return 0, false
	}
	v := 0
	for k := i; k < i+n; k++ {
		c := s[k]
		if c < '0' || c > '9' {
			return 0, false
		}
		v = v*10 + int(c-'0')
	}
	return v, true
}

// parseCalendar reads YYYY-MM-DD[(T|t| )hh:mm[:ss[.frac]][zone]].
func parseCalendar[T string | []byte](s T) (time.Time, bool) {
	year, ok1 := digits(s, 0, 4)
	month, ok2 := digits(s, 5, 2)
	day, ok3 := digits(s, 8, 2)
	if !ok1 || !ok2 || !ok3 || s[4] != '-' || s[7] != '-' {
		return time.Time{}, false
	}
	var hour, min, sec, nsec, offset int
	i := 10
	if i < len(s) {
		if c := s[i]; c != 'T' && c != 't' && c != ' ' {
			return time.Time{}, false
		}
		var ok bool
		if hour, ok = digits(s, i+1, 2); !ok || i+3 >= len(s) || s[i+3] != ':' {
			return time.Time{}, false
		}
		if min, ok = digits(s, i+4, 2); !ok {
			return time.Time{}, false
		}
		i += 6
		if i < len(s) && s[i] == ':' {
			if sec, ok = digits(s, i+1, 2); !ok {
				return time.Time{}, false
			}
			i += 3
			if i < len(s) && s[i] == '.' {
				i++
				start, scale := i, 1_000_000_000
				for i < len(s) && s[i] >= '0' && s[i] <= '9' {
					if scale > 1 {
						scale /= 10
						nsec += int(s[i]-'0') * scale
					}
					i++
				}
				if i == start {
					return time.Time{}, false
				}
			}
		}
		if offset, ok = parseZone(s[i:]); !ok {
			return time.Time{}, false
		}
	}
	if month < 1 || month > 12 || day < 1 || hour > 23 || min > 59 || sec > 59 {
		return time.Time{}, false
	}
	t := time.Date(year, time.Month(month), day, hour, min, sec, nsec, time.UTC).Add(-time.Duration(offset) * time.Second)
	// time.Date normalises 30 February to 2 March: refuse what moved.
	if t.Add(time.Duration(offset)*time.Second).Day() != day {
		return time.Time{}, false
	}
	if !time.Unix(0, t.UnixNano()).Equal(t) {
		return time.Time{}, false
	}
	return t, true
}

// parseZone reads "", "Z", "z", "±hh", "±hhmm" or "±hh:mm" and returns the
// offset east of UTC in seconds.
func parseZone[T string | []byte](z T) (int, bool) {
	switch {
	case len(z) == 0:
		return 0, true
	case len(z) == 1 && (z[0] == 'Z' || z[0] == 'z'):
		return 0, true
	case z[0] != '+' && z[0] != '-':
		return 0, false
	}
	hh, ok := digits(z, 1, 2)
	if !ok {
		return 0, false
	}
	mm := 0
	switch len(z) {
	case 3:
	case 5:
		mm, ok = digits(z, 3, 2)
	case 6:
		mm, ok = digits(z, 4, 2)
		ok = ok && z[3] == ':'
	default:
		ok = false
	}
	if !ok || hh > 23 || mm > 59 {
		return 0, false
	}
	off := hh*3600 + mm*60
	if z[0] == '-' {
		off = -off
	}
	return off, true
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

// ParseSpan reads a positive span of time: a Go duration ("12h", "90m",
// "1h30m") or a decimal number of days ("30d", "1.5d", "0.25d"), exactly,
// without floating point; nanoseconds beyond the last are cut. "" means
// no span and returns 0. A span of zero or less, or one longer than
// time.Duration holds (about 292 years, 106751 days), is an error that
// says so.
func ParseSpan(s string) (time.Duration, error) {
	if s == "" {
		return 0, nil
	}
	if days, ok := strings.CutSuffix(s, "d"); ok {
		return parseDays(s, days)
	}
	d, err := time.ParseDuration(s)
	if err != nil {
		if isOverflow(s) {
			return 0, fmt.Errorf("span %q is too long: the longest is %v (about 106751 days)", s, time.Duration(1<<63-1))
		}
		return 0, fmt.Errorf("bad span %q: want a duration such as 12h or 90m, or days such as 30d or 1.5d", s)
	}
	if d <= 0 {
		return 0, fmt.Errorf("span %q must be longer than zero", s)
	}
	return d, nil
}

// isOverflow reports whether s is well formed for time.ParseDuration but
// too large: the same text with every number replaced by 1 parses.
func isOverflow(s string) bool {
	var b strings.Builder
	inNum := false
	for _, c := range s {
		if (c >= '0' && c <= '9') || c == '.' {
			if !inNum {
				b.WriteByte('1')
			}
			inNum = true
			continue
		}
		inNum = false
		b.WriteRune(c)
	}
	_, err := time.ParseDuration(b.String())
	return err == nil
}

// parseDays reads the number of days in d (s is the whole text, for
// messages): digits with an optional fraction, no sign, no exponent.
func parseDays(s, d string) (time.Duration, error) {
	bad := fmt.Errorf("bad span %q: want a duration such as 12h or 90m, or days such as 30d or 1.5d", s)
	intPart, frac, _ := strings.Cut(d, ".")
	if intPart == "" && frac == "" {
		return 0, bad
	}
	for _, part := range [...]string{intPart, frac} {
		for _, c := range part {
			if c < '0' || c > '9' {
				return 0, bad
			}
		}
	}
	if strings.HasSuffix(d, ".") {
		return 0, bad
	}
	// days × 86400e9 ns, in exact rational arithmetic.
	r, ok := new(big.Rat).SetString("0" + intPart + "." + frac + "0")
	if !ok {
		return 0, bad
	}
	r.Mul(r, new(big.Rat).SetInt64(int64(24*time.Hour)))
	ns := new(big.Int).Quo(r.Num(), r.Denom())
	switch {
	case ns.Sign() == 0:
		return 0, fmt.Errorf("span %q must be longer than zero", s)
	case !ns.IsInt64():
		return 0, fmt.Errorf("span %q is too long: the longest is %v (about 106751 days)", s, time.Duration(1<<63-1))
	}
	return time.Duration(ns.Int64()), nil
}
