package stream

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"math/big"
	"math/rand/v2"
	"strings"
	"testing"
	"time"
	"unicode/utf8"
)

// firstInvalid is the reference for invalidUTF8, from unicode/utf8: the
// first index where DecodeRune reports an invalid byte.
func firstInvalid(b []byte) int {
	for i := 0; i < len(b); {
		r, n := utf8.DecodeRune(b[i:])
		if r == utf8.RuneError && n == 1 {
			return i
		}
		i += n
	}
	return -1
}

// TestInvalidUTF8MatchesStdlib holds our validator to unicode/utf8 on
// every sequence of one to three bytes, on random four-byte ones, and on
// those placed after a valid prefix.
func TestInvalidUTF8MatchesStdlib(t *testing.T) {
	check := func(b []byte) {
		if got, want := invalidUTF8(b), firstInvalid(b); got != want {
			t.Fatalf("invalidUTF8(% x) = %d, unicode/utf8 says %d", b, got, want)
		}
		if got := invalidUTF8(string(b)); got != firstInvalid(b) {
			t.Fatalf("invalidUTF8 of the string % x = %d", b, got)
		}
	}
	for a := 0; a < 256; a++ {
		check([]byte{byte(a)})
		for b := 0; b < 256; b++ {
			check([]byte{byte(a), byte(b)})
			for _, c := range []int{0x00, 0x41, 0x7f, 0x80, 0x8f, 0x90, 0x9f, 0xa0, 0xbf, 0xc0, 0xc2, 0xe0, 0xed, 0xf0, 0xf4, 0xff} {
				check([]byte{byte(a), byte(b), byte(c)})
			}
		}
	}
	r := rand.New(rand.NewPCG(1, 2))
	for range 200_000 {
		b := []byte{0xf0 + byte(r.IntN(16)), byte(r.IntN(256)), byte(r.IntN(256)), byte(r.IntN(256))}
		check(b)
		check(append([]byte("ok é "), b...))
	}
}

// TestNodeIDLimits: ids of the limit's length pass, one byte more, a NUL
// byte or bytes that are not UTF-8 reject the line with a reason naming
// the key; the next line is read.
func TestNodeIDLimits(t *testing.T) {
	atLimit := strings.Repeat("é", MaxIDBytes/2)
	over := atLimit + "x"
	text := "src,dst,id\n" +
		atLimit + ",b,\n" +
		"a," + over + ",\n" +
		"a\x00z,b,\n" +
		"a,\xc3\x28,\n" +
		"a,b," + over + "\n" +
		"a,b,x\x7fy\n" +
		"c,d,\n"
	r, err := NewReader("ids", strings.NewReader(text), Options{})
	if err != nil {
		t.Fatal(err)
	}
	got := drain(r)
	want := []string{
		`2#1 add "` + atLimit + `" "b" id=derived`,
		fmt.Sprintf("3#2 reject dst too long: 1025 bytes, the limit is 1024: %q", "a,"+over+","),
		`4#3 reject src contains a NUL byte: at byte 2: "a\x00z,b,"`,
		`5#4 reject dst is not valid UTF-8: byte 0xc3 at byte 1: "a,\xc3(,"`,
		fmt.Sprintf("6#5 reject id too long: 1025 bytes, the limit is 1024: %q", "a,b,"+over),
		`7#6 reject id contains a control character: byte 0x7f at byte 2: "a,b,x\x7fy"`,
		`8#7 add "c" "d" id=derived`,
		"eof lines=8 header=1 blank=0 records=7",
	}
	if strings.Join(got, "\n") != strings.Join(want, "\n") {
		t.Errorf("got:\n%s\nwant:\n%s", strings.Join(got, "\n"), strings.Join(want, "\n"))
	}
	if err := CheckNodeID(atLimit); err != nil {
		t.Errorf("CheckNodeID at the limit: %v", err)
	}
	for _, bad := range []string{"", over, "a\x00", "\xff"} {
		if CheckNodeID(bad) == nil {
			t.Errorf("CheckNodeID(%.20q) accepted", bad)
		}
	}
}

func TestParseSpan(t *testing.T) {
	for _, tc := range []struct {
		in   string
		want time.Duration
		err  string // substring of the error; "" for none
	}{
		{"", 0, ""},
		{"30d", 30 * 24 * time.Hour, ""},
		{"1.5d", 36 * time.Hour, ""},
		{".5d", 12 * time.Hour, ""},
		{"0.000000000001d", 86, ""},                   // 86.4 ns, cut to 86
		{"0.000000000000001d", 0, "longer than zero"}, // 0.0864 ns, cut to 0
		{"12h", 12 * time.Hour, ""},
		{"1h30m", 90 * time.Minute, ""},
		{"106751d", 106751 * 24 * time.Hour, ""},
		{"106752d", 0, "too long"},
		{"99999999999999999999d", 0, "too long"},
		{"2562048h", 0, "too long"},
		{"9999999999999999999h", 0, "too long"},
		{"0d", 0, "longer than zero"},
		{"0s", 0, "longer than zero"},
		{"-5h", 0, "longer than zero"},
		{"-5d", 0, "bad span"},
		{"5.d", 0, "bad span"},
		{"d", 0, "bad span"},
		{"1e3d", 0, "bad span"},
		{"5 d", 0, "bad span"},
		{"tomorrow", 0, "bad span"},
		{"30", 0, "bad span"},
	} {
		got, err := ParseSpan(tc.in)
		switch {
		case tc.err == "" && (err != nil || got != tc.want):
			t.Errorf("ParseSpan(%q) = %v, %v; want %v", tc.in, got, err, tc.want)
		case tc.err != "" && (err == nil || !strings.Contains(err.Error(), tc.err)):
			t.Errorf("ParseSpan(%q) = %v, %v; want an error with %q", tc.in, got, err, tc.err)
		}
	}
}

// TestDecimalCompare holds decimal.cmp to math/big's exact rationals on
// random numbers written in many ways (leading and trailing zeros, signs,
// bare fractions).
func TestDecimalCompare(t *testing.T) {
	r := rand.New(rand.NewPCG(3, 4))
	write := func() string {
		var b strings.Builder
		switch r.IntN(4) {
		case 0:
			b.WriteByte('-')
		case 1:
			b.WriteByte('+')
		}
		for range r.IntN(3) {
			b.WriteByte('0')
		}
		digits := "0123456789"
		n := r.IntN(4)
		for range n {
			b.WriteByte(digits[r.IntN(10)])
		}
		if n == 0 || r.IntN(2) == 0 {
			b.WriteByte('.')
			for range 1 + r.IntN(4) {
				b.WriteByte(digits[r.IntN(10)])
			}
			for range r.IntN(3) {
				b.WriteByte('0')
			}
		}
		return b.String()
	}
	for range 100_000 {
		x, y := write(), write()
		dx, ok1 := parseDecimal(x)
		dy, ok2 := parseDecimal(y)
		rx, _ := new(big.Rat).SetString(x)
		ry, _ := new(big.Rat).SetString(y)
		if !ok1 || !ok2 || rx == nil || ry == nil {
			t.Fatalf("%q or %q did not parse (%v %v)", x, y, ok1, ok2)
		}
		if got, want := dx.cmp(dy), rx.Cmp(ry); got != want {
			t.Fatalf("cmp(%q, %q) = %d, math/big says %d", x, y, got, want)
		}
	}
	for _, bad := range []string{"", "-", "+", ".", "1.", "1e3", "1,000", " 1", "1 ", "0x10", "1.2.3", "--1"} {
		if _, ok := parseDecimal(bad); ok {
			t.Errorf("parseDecimal(%q) accepted", bad)
		}
	}
}

// TestTruncatedGzip: a gzip log cut short delivers its complete lines and
// then a final error naming the last complete line; nothing past it is
// an event.
func TestTruncatedGzip(t *testing.T) {
	var b strings.Builder
	b.WriteString("src,dst\n")
	for i := range 20000 {
		fmt.Fprintf(&b, "a%d,b%d\n", i, i)
	}
	whole := gzipBytes(t, []byte(b.String()))
	data := whole[:len(whole)/2]
	r, err := NewReader("cut.csv.gz", bytes.NewReader(data), Options{})
	if err != nil {
		t.Fatal(err)
	}
	last := 0
	for {
		ev, err := r.Next()
		if err == nil {
			if ev.FileLine != last+1 && last != 0 {
				t.Fatalf("line %d after %d", ev.FileLine, last)
			}
			if want := fmt.Sprintf("a%d", ev.FileLine-2); ev.Src != want {
				t.Fatalf("line %d has src %q, want %q", ev.FileLine, ev.Src, want)
			}
			last = ev.FileLine
			continue
		}
		if err == io.EOF || errors.As(err, new(*LineError)) {
			t.Fatalf("after line %d: %v, want a final error", last, err)
		}
		want := fmt.Sprintf("reading after line %d (the last complete line)", last)
		if !strings.Contains(err.Error(), want) || !errors.Is(err, io.ErrUnexpectedEOF) || r.Lines() != last {
			t.Fatalf("final error %q (Lines %d), want one with %q", err, r.Lines(), want)
		}
		if last < 1000 {
			t.Fatalf("only %d lines read from half of the file", last)
		}
		return
	}
}

// TestUnusedKeysBounded: a log with endless distinct keys lists the first
// 32 and "…".
func TestUnusedKeysBounded(t *testing.T) {
	var b strings.Builder
	for i := range 100 {
		fmt.Fprintf(&b, "{\"src\":\"a\",\"dst\":\"b\",\"k%d\":1,\"k%d\":2}\n", i, i+1)
	}
	r, err := NewReader("keys", strings.NewReader(b.String()), Options{})
	if err != nil {
		t.Fatal(err)
	}
	readAll(t, r)
	u := r.Unused()
	if len(u) != 33 || u[0] != "k0" || u[1] != "k1" || u[31] != "k31" || u[32] != "…" {
		t.Errorf("unused %v", u)
	}
}
