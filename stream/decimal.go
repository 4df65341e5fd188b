package stream

// decimal is an exact decimal number as written: sign, the integer digits
// without leading zeros and the fraction digits without trailing zeros,
// as slices of the text. Zero is never negative.
type decimal struct {
	neg         bool
	whole, frac []byte
}

// parseDecimal reads [+|-]digits[.digits] or [+|-].digits: no exponent, no
// thousands separators, no spaces.
func parseDecimal[T string | []byte](s T) (decimal, bool) {
	b := []byte(s)
	var d decimal
	if len(b) > 0 && (b[0] == '+' || b[0] == '-') {
		d.neg = b[0] == '-'
		b = b[1:]
	}
	dot := indexByte(b, '.')
	whole, frac := b, b[:0]
	if dot >= 0 {
		whole, frac = b[:dot], b[dot+1:]
		if len(frac) == 0 {
			return decimal{}, false
		}
	}
	if len(whole) == 0 && len(frac) == 0 {
		return decimal{}, false
	}
	for _, part := range [2][]byte{whole, frac} {
		for _, c := range part {
			if c < '0' || c > '9' {
				return decimal{}, false
			}
		}
	}
	for len(whole) > 0 && whole[0] == '0' {
		whole = whole[1:]
	}
	for len(frac) > 0 && frac[len(frac)-1] == '0' {
		frac = frac[:len(frac)-1]
	}
	d.whole, d.frac = whole, frac
	if len(whole) == 0 && len(frac) == 0 {
		d.neg = false
	}
	return d, true
}

// cmp returns -1, 0 or +1 as d is less than, equal to or greater than e.
func (d decimal) cmp(e decimal) int {
	switch {
	case d.neg && !e.neg:
		return -1
	case !d.neg && e.neg:
		return 1
	}
	m := cmpMagnitude(d, e)
	if d.neg {
		return -m
	}
	return m
}

// cmpMagnitude compares |d| and |e|: more integer digits is larger (no
// leading zeros), then digit by digit, the fractions digit by digit (no
// trailing zeros, so a shorter equal prefix is smaller).
func cmpMagnitude(d, e decimal) int {
	if len(d.whole) != len(e.whole) {
		return sign(len(d.whole) - len(e.whole))
	}
	if c := cmpDigits(d.whole, e.whole); c != 0 {
		return c
	}
	return cmpDigits(d.frac, e.frac)
}

// cmpDigits compares digit strings lexicographically.
func cmpDigits(a, b []byte) int {
	for i := 0; i < len(a) && i < len(b); i++ {
		if a[i] != b[i] {
			return sign(int(a[i]) - int(b[i]))
		}
	}
	return sign(len(a) - len(b))
}

func sign(x int) int {
	switch {
	case x < 0:
		return -1
	case x > 0:
		return 1
	}
	return 0
}
