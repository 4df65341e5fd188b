package stream

import (
	"bytes"
	"crypto/sha256"
	"encoding/csv"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
	"time"
)

// prefixID is the derived id computed straight from its definition in
// doc.go: SHA-256 of content[:end], first 16 bytes in hex, ":", line.
func prefixID(content string, end, line int) string {
	s := sha256.Sum256([]byte(content[:end]))
	return hex.EncodeToString(s[:16]) + ":" + fmt.Sprint(line)
}

func readAll(t *testing.T, r *Reader) []Event {
	t.Helper()
	var evs []Event
	for {
		ev, err := r.Next()
		if err == io.EOF {
			return evs
		}
		if err != nil {
			t.Fatalf("%s: %v", r.Name(), err)
		}
		evs = append(evs, ev)
	}
}

func TestDerivedID(t *testing.T) {
	const csvText = "src,dst\r\na,b\r\n\r\n\"c d\",e\r\nf,g"
	const jsonText = "{\"src\":\"a\",\"dst\":\"b\"}\n\n{\"src\":\"c\",\"dst\":\"d\"}\n"
	for _, tc := range []struct {
		name, content string
		ends          []int // end offset of each data record
	}{
		{"csv", csvText, []int{len("src,dst\r\na,b\r\n"), len(csvText) - len("f,g"), len(csvText)}},
		{"jsonl", jsonText, []int{len("{\"src\":\"a\",\"dst\":\"b\"}\n"), len(jsonText)}},
	} {
		for _, gz := range []bool{false, true} {
			data := []byte(tc.content)
			if gz {
				data = gzipBytes(t, data)
			}
			r, err := NewReader(tc.name, bytes.NewReader(data), Options{})
			if err != nil {
				t.Fatal(err)
			}
			evs := readAll(t, r)
			if len(evs) != len(tc.ends) {
				t.Fatalf("%s gz=%v: %d events, want %d", tc.name, gz, len(evs), len(tc.ends))
			}
			for i, ev := range evs {
				if want := prefixID(tc.content, tc.ends[i], i+1); ev.ID != want {
					t.Errorf("%s gz=%v event %d: id %s, want %s", tc.name, gz, i+1, ev.ID, want)
				}
			}
			sum, ok := r.Sum()
			if !ok || sum != sha256.Sum256([]byte(tc.content)) {
				t.Errorf("%s gz=%v: Sum %x, %v; want the SHA-256 of the content", tc.name, gz, sum, ok)
			}
		}
	}
}

func TestAppendedLogKeepsIDs(t *testing.T) {
	base := "src,dst\na,b\nc,d\n"
	ids := func(text string) []string {
		r, err := NewReader("x", strings.NewReader(text), Options{})
		if err != nil {
			t.Fatal(err)
		}
		var out []string
		for _, ev := range readAll(t, r) {
			out = append(out, ev.ID)
		}
		return out
	}
	short, long := ids(base), ids(base+"e,f\n")
	if len(short) != 2 || len(long) != 3 || short[0] != long[0] || short[1] != long[1] || long[2] == long[1] {
		t.Errorf("ids of the log %v and of the log appended to %v", short, long)
	}
	other := ids("src,dst\na,b\nc,x\n")
	if other[0] != short[0] || other[1] == short[1] {
		t.Errorf("a changed record must change its id, an unchanged prefix must not: %v vs %v", other, short)
	}
}

func TestSumBeforeEOF(t *testing.T) {
	r, err := NewReader("x", strings.NewReader("src,dst\na,b\n"), Options{})
	if err != nil {
		t.Fatal(err)
	}
	if _, ok := r.Sum(); ok {
		t.Error("Sum reported done before EOF")
	}
}

func writeFile(t *testing.T, dir, name string, data []byte) string {
	t.Helper()
	p := filepath.Join(dir, name)
	if err := os.WriteFile(p, data, 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

func TestOpenFiles(t *testing.T) {
	dir := t.TempDir()
	csvText := []byte("ts,src,dst\n1772357400,a,b\n,b,c\n")
	jsonText := []byte("{\"src\":\"a\",\"dst\":\"b\",\"ts\":1772357400}\n{\"src\":\"b\",\"dst\":\"c\"}\n")
	// "first" is not a column in JSON lines, so the JSON files read as
	// JSON only if the name or the first byte decides it.
	for _, tc := range []struct {
		name string
		data []byte
	}{
		{"log.csv", csvText},
		{"log.csv.gz", gzipBytes(t, csvText)},
		{"gzip-but-named.csv", gzipBytes(t, csvText)},
		{"log.jsonl", jsonText},
		{"log.ndjson.gz", gzipBytes(t, jsonText)},
		{"no-extension", jsonText},
		{"no-extension-gz", gzipBytes(t, jsonText)},
		{"LOG.CSV", csvText},
	} {
		p := writeFile(t, dir, tc.name, tc.data)
		r, err := Open(p, Options{})
		if err != nil {
			t.Fatalf("%s: %v", tc.name, err)
		}
		if r.Size() != int64(len(tc.data)) {
			t.Errorf("%s: Size %d, want %d", tc.name, r.Size(), len(tc.data))
		}
		evs := readAll(t, r)
		if len(evs) != 2 || evs[0].Src != "a" || evs[1].Dst != "c" || !evs[0].HasTS || evs[1].HasTS ||
			!evs[0].TS.Equal(time.Unix(1772357400, 0)) {
			t.Errorf("%s: events %+v", tc.name, evs)
		}
		if r.Offset() != r.Size() {
			t.Errorf("%s: Offset %d at EOF, want Size %d", tc.name, r.Offset(), r.Size())
		}
		sum, _ := r.Sum()
		fileSum, err := HashFile(p)
		if err != nil {
			t.Fatal(err)
		}
		if sum != fileSum {
			t.Errorf("%s: Reader.Sum %x, HashFile %x", tc.name, sum, fileSum)
		}
		if err := r.Close(); err != nil {
			t.Error(err)
		}
	}
	a, _ := HashFile(filepath.Join(dir, "log.csv"))
	b, _ := HashFile(filepath.Join(dir, "log.csv.gz"))
	if a != b || a != sha256.Sum256(csvText) {
		t.Error("HashFile of a file and of its gzip differ, or differ from the SHA-256 of the content")
	}
	if _, err := Open(filepath.Join(dir, "absent.csv"), Options{}); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("Open of an absent file: %v", err)
	}
	if _, err := HashFile(filepath.Join(dir, "absent.csv")); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("HashFile of an absent file: %v", err)
	}
}

func TestCorruptGzipIsFinal(t *testing.T) {
	data := gzipBytes(t, []byte(strings.Repeat("src,dst\na,b\n", 1)+strings.Repeat("a,b\n", 5000)))
	data[len(data)-6] ^= 0xff // the CRC-32 in the gzip trailer
	r, err := NewReader("bad.gz", bytes.NewReader(data), Options{})
	if err != nil {
		t.Fatal(err)
	}
	var n int
	var last error
	for last == nil {
		_, last = r.Next()
		n++
	}
	var le *LineError
	if last == io.EOF || errors.As(last, &le) || !strings.Contains(last.Error(), "checksum") {
		t.Fatalf("after %d events: %v, want a gzip checksum error", n, last)
	}
	if _, again := r.Next(); again != last {
		t.Errorf("a read error must stay: got %v then %v", last, again)
	}
}

func TestLongJSONLine(t *testing.T) {
	long := strings.Repeat("x", 200<<10)
	text := fmt.Sprintf("{\"src\":\"a\",\"dst\":\"b\",\"memo\":\"%s\"}\n{\"src\":\"c\",\"dst\":\"d\"}\n", long)
	r, err := NewReader("x", strings.NewReader(text), Options{})
	if err != nil {
		t.Fatal(err)
	}
	evs := readAll(t, r)
	if len(evs) != 2 || evs[0].Src != "a" || evs[1].Src != "c" || evs[1].Line != 2 {
		t.Fatalf("long line: %d events", len(evs))
	}
	if want := prefixID(text, len(text)-len("{\"src\":\"c\",\"dst\":\"d\"}\n"), 1); evs[0].ID != want {
		t.Errorf("id %s, want %s", evs[0].ID, want)
	}
}

// TestLineLimit: a line longer than MaxLineBytes is rejected with its
// first bytes kept, read past without being held, and the reader goes on
// at the next line with the right numbers and ids; a line of exactly
// MaxLineBytes is read.
func TestLineLimit(t *testing.T) {
	over := "a,b,\"" + strings.Repeat("q", MaxLineBytes+5<<20)
	exact := "c,d," + strings.Repeat("z", MaxLineBytes-4)
	for _, tc := range []struct {
		name, text string
		gz         bool
	}{
		{"plain", "src,dst,memo\n" + over + "\n" + exact + "\r\ne,f,g\n", false},
		{"gzip", "src,dst,memo\n" + over + "\n" + exact + "\r\ne,f,g\n", true},
	} {
		data := []byte(tc.text)
		if tc.gz {
			data = gzipBytes(t, data)
		}
		r, err := NewReader("x", bytes.NewReader(data), Options{})
		if err != nil {
			t.Fatal(err)
		}
		_, err = r.Next()
		var le *LineError
		if !errors.As(err, &le) || le.FileLine != 2 || le.Line != 1 || len(le.Raw) != rawKeep || string(le.Raw[:5]) != "a,b,\"" ||
			!strings.HasPrefix(le.Reason, fmt.Sprintf("line too long: %d bytes", len(over))) {
			t.Fatalf("%s: first result %v (raw %d bytes), want the long line rejected", tc.name, err, len(le.Raw))
		}
		if c := cap(r.lr.long); c > MaxLineBytes+64<<10 {
			t.Errorf("%s: a %d byte line was held in a %d byte buffer", tc.name, len(over), c)
		}
		ev, err := r.Next()
		if err != nil || ev.FileLine != 3 || ev.Line != 2 || ev.Src != "c" {
			t.Fatalf("%s: after the long line: %+v, %v", tc.name, ev.Src, err)
		}
		if got := len(r.Raw()); got != MaxLineBytes {
			t.Errorf("%s: raw of a line of exactly the limit has %d bytes", tc.name, got)
		}
		ev, err = r.Next()
		end := len(tc.text)
		if err != nil || ev.FileLine != 4 || ev.ID != prefixID(tc.text, end, 3) {
			t.Fatalf("%s: last line %+v, %v", tc.name, ev.Line, err)
		}
		if _, err := r.Next(); err != io.EOF || r.Lines() != 4 {
			t.Fatalf("%s: %v after %d lines, want EOF after 4", tc.name, err, r.Lines())
		}
	}
}

// TestStdin runs this test binary again as a child that reads "-" and
// prints the events; the parent pipes a gzip CSV log into it.
func TestStdin(t *testing.T) {
	if os.Getenv("ORBITWATCH_STREAM_STDIN_CHILD") == "1" {
		r, err := Open("-", Options{Columns: map[string]string{"src": "payer"}})
		if err != nil {
			fmt.Println("open:", err)
			os.Exit(2)
		}
		if r.Size() != -1 {
			fmt.Println("stdin size", r.Size())
		}
		fmt.Print(strings.Join(drain(r), "\n"))
		sum, _ := r.Sum()
		fmt.Printf("\nsum %x\n", sum)
		os.Exit(0)
	}
	text := "payer,dst,op\nalpha,beta,add\nbeta,gamma,drop\ngamma,alpha,remove\n"
	cmd := exec.Command(os.Args[0], "-test.run=^TestStdin$")
	cmd.Env = append(os.Environ(), "ORBITWATCH_STREAM_STDIN_CHILD=1")
	cmd.Stdin = bytes.NewReader(gzipBytes(t, []byte(text)))
	out, err := cmd.Output()
	if err != nil {
		t.Fatalf("child: %v\n%s", err, out)
	}
	want := strings.Join([]string{
		`2#1 add "alpha" "beta" id=derived`,
		`3#2 reject bad op "drop": want add or remove: "beta,gamma,drop"`,
		`4#3 remove "gamma" "alpha" id=derived`,
		"eof lines=4 header=1 blank=0 records=3",
		fmt.Sprintf("sum %x", sha256.Sum256([]byte(text))),
	}, "\n") + "\n"
	if string(out) != want {
		t.Errorf("child printed:\n%s\nwant:\n%s", out, want)
	}
}

func TestRejectWriter(t *testing.T) {
	var buf bytes.Buffer
	rw := NewRejectWriter(&buf)
	rejects := []struct {
		src string
		e   LineError
	}{
		{"a.csv", LineError{Line: 2, FileLine: 3, Reason: `bad op "x"`, Raw: []byte(`,x,a,b`)}},
		{"stdin", LineError{Line: 7, FileLine: 9, Reason: "empty src", Raw: []byte("\"q\nr\",,b")}},
	}
	for _, r := range rejects {
		if err := rw.Write(r.src, &r.e); err != nil {
			t.Fatal(err)
		}
	}
	if err := rw.Flush(); err != nil {
		t.Fatal(err)
	}
	if rw.Count() != 2 {
		t.Errorf("Count %d", rw.Count())
	}
	recs, err := csv.NewReader(&buf).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	want := [][]string{{"source", "line", "reason", "raw"}, {"a.csv", "3", `bad op "x"`, ",x,a,b"}, {"stdin", "9", "empty src", "\"q\nr\",,b"}}
	if fmt.Sprint(recs) != fmt.Sprint(want) {
		t.Errorf("rejects read back %q, want %q", recs, want)
	}
	var empty bytes.Buffer
	if err := NewRejectWriter(&empty).Flush(); err != nil || empty.String() != "source,line,reason,raw\n" {
		t.Errorf("no rejects wrote %q, %v; want the header only", empty.String(), err)
	}
}

func TestParseTime(t *testing.T) {
	for _, tc := range []struct {
		in   string
		want time.Time // zero: an error is expected
	}{
		{"2026-03-01T09:30:00Z", time.Date(2026, 3, 1, 9, 30, 0, 0, time.UTC)},
		{"2026-03-01T09:30:00.123456789-02:00", time.Date(2026, 3, 1, 11, 30, 0, 123456789, time.UTC)},
		{"1772357400", time.Unix(1772357400, 0)},
		{"+1772357400", time.Unix(1772357400, 0)},
		{"1772357400.0000000019", time.Unix(1772357400, 1)},
		{"1772357400123.456789", time.Unix(1772357400, 123456789)},
		{"-1772357400123", time.Unix(-1772357400, -123000000)},
		{"0", time.Unix(0, 0)},
		{"99999999999.5", time.Time{}},
		{"9223372036854", time.Unix(9223372036, 854000000)},
		{"9223372036855", time.Time{}},
		{"1772357400.", time.Time{}},
		{".5", time.Time{}},
		{"17723x", time.Time{}},
		{"1e9", time.Time{}},
		{"-", time.Time{}},
		{"", time.Time{}},
		{"3000-01-01T00:00:00Z", time.Time{}},
		{"2026-03-01", time.Date(2026, 3, 1, 0, 0, 0, 0, time.UTC)},
		{"2026-03-01 09:17:00", time.Date(2026, 3, 1, 9, 17, 0, 0, time.UTC)},
		{"2026-03-01 09:17:00+02:00", time.Date(2026, 3, 1, 7, 17, 0, 0, time.UTC)},
		{"2026-03-01t09:17:00.000000001z", time.Date(2026, 3, 1, 9, 17, 0, 1, time.UTC)},
		{"2026-03-01 23:30-0100", time.Date(2026, 3, 2, 0, 30, 0, 0, time.UTC)},
		{"2026-12-31 23:59:59.9999999999", time.Date(2026, 12, 31, 23, 59, 59, 999999999, time.UTC)},
		{"1677-09-21", time.Time{}}, // int64 ns begin 1677-09-21T00:12:43Z
		{"1677-09-22", time.Date(1677, 9, 22, 0, 0, 0, 0, time.UTC)},
		{"2262-04-12", time.Time{}}, // and end 2262-04-11T23:47:16Z
		{"2262-04-11", time.Date(2262, 4, 11, 0, 0, 0, 0, time.UTC)},
		{"2026-04-31", time.Time{}},
		{"2026-13-01", time.Time{}},
		{"2026-00-10", time.Time{}},
		{"2026-03-01 09:60", time.Time{}},
		{"2026-03-01 09:17:60", time.Time{}},
		{"2026-03-01 09:17:00.", time.Time{}},
		{"2026-03-01 09:17:00+24:00", time.Time{}},
		{"2026-03-01 09:17:00+02:0", time.Time{}},
		{"2026-03-01 09:17:00 +02:00", time.Time{}},
		{"2026-03-01T", time.Time{}},
		{"2026-03-01x09:17", time.Time{}},
		{"26-03-01", time.Time{}},
	} {
		got, err := ParseTime(tc.in)
		if tc.want.IsZero() {
			if err == nil {
				t.Errorf("ParseTime(%q) = %v, want an error", tc.in, got)
			}
			continue
		}
		if err != nil || !got.Equal(tc.want) || got.Location() != time.UTC {
			t.Errorf("ParseTime(%q) = %v, %v; want %v", tc.in, got, err, tc.want)
		}
	}
}

func TestOpString(t *testing.T) {
	if OpAdd.String() != "add" || OpRemove.String() != "remove" || Op(2).Valid() {
		t.Error("Op names or validity wrong")
	}
	defer func() {
		if r := recover(); r == nil || !strings.HasPrefix(fmt.Sprint(r), "stream: ") {
			t.Errorf("Op(7).String() recovered %v, want a stream: panic", r)
		}
	}()
	_ = Op(7).String()
}

// TestLiveStream reads from a pipe whose writer stays open: each event
// must come as soon as its line is written, format decided by sniffing.
func TestLiveStream(t *testing.T) {
	for _, tc := range []struct{ head, line string }{
		{"src,dst\n", "a,b\n"},
		{"", "{\"src\":\"a\",\"dst\":\"b\"}\n"},
	} {
		pr, pw := io.Pipe()
		done := make(chan error, 1)
		var ev Event
		go func() {
			r, err := NewReader("pipe", pr, Options{})
			if err == nil {
				ev, err = r.Next()
			}
			done <- err
		}()
		if _, err := io.WriteString(pw, tc.head+tc.line); err != nil {
			t.Fatal(err)
		}
		select {
		case err := <-done:
			if err != nil || ev.Src != "a" || ev.Dst != "b" {
				t.Errorf("%q: %+v, %v", tc.line, ev, err)
			}
		case <-time.After(10 * time.Second):
			t.Errorf("%q: no event while the writer is still open", tc.line)
		}
		pw.Close()
	}
}

// TestLargeLogBoundedBuffer reads a log far larger than the read buffers
// and checks the events, the last derived id and that short lines are
// read in place, without a line buffer of their own.
func TestLargeLogBoundedBuffer(t *testing.T) {
	n := 60_000
	if testing.Short() {
		n = 15_000
	}
	data := benchLog(n, "csv")
	r, err := NewReader("big", bytes.NewReader(data), Options{})
	if err != nil {
		t.Fatal(err)
	}
	evs := readAll(t, r)
	if len(evs) != n || evs[n-1].Line != n {
		t.Fatalf("%d events, want %d", len(evs), n)
	}
	if want := prefixID(string(data), len(data), n); evs[n-1].ID != want {
		t.Errorf("last id %s, want %s", evs[n-1].ID, want)
	}
	if c := cap(r.lr.long); c > 0 {
		t.Errorf("a line buffer of %d bytes was made for lines that fit the read buffer", c)
	}
}

// TestOptionsCheck: Check refuses the options that can read nothing and
// passes the rest, and NewReader refuses with Check's error before it
// reads a byte.
func TestOptionsCheck(t *testing.T) {
	for _, c := range []struct {
		opts Options
		want string // "" for none
	}{
		{Options{}, ""},
		{Options{Format: "jsonl", Columns: map[string]string{"src": "payer", "amount": "value"}, MinAmount: "12.50"}, ""},
		{Options{Format: "xml"}, `unknown format "xml"`},
		{Options{Columns: map[string]string{"payer": "src"}}, `unknown key "payer"`},
		{Options{Columns: map[string]string{"src": "dst"}}, `keys src and dst both read "dst"`},
		{Options{Columns: map[string]string{"src": ""}}, `empty name for key "src"`},
		{Options{MinAmount: "ten"}, `minimum amount "ten" is not a decimal number`},
		{Options{MinAmount: "1e3"}, `minimum amount "1e3" is not a decimal number`},
		{Options{Columns: map[string]string{"amount": "value"}}, "none is given"},
	} {
		err := c.opts.Check()
		if (err == nil) != (c.want == "") || (err != nil && !strings.Contains(err.Error(), c.want)) {
			t.Errorf("%+v: Check() = %v, want %q", c.opts, err, c.want)
			continue
		}
		r, rerr := NewReader("log", failingReader{}, c.opts)
		if c.want != "" && (rerr == nil || rerr.Error() != err.Error()) {
			t.Errorf("%+v: NewReader error %v, want Check's %v", c.opts, rerr, err)
		}
		if r != nil {
			r.Close()
		}
	}
}

// failingReader fails every read: NewReader must refuse bad options
// before it reads.
type failingReader struct{}

func (failingReader) Read([]byte) (int, error) { return 0, errors.New("read") }
