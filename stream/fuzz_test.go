package stream

import (
	"bytes"
	"compress/gzip"
	"crypto/sha256"
	"errors"
	"io"
	"strings"
	"testing"
)

// fileLines splits content as an editor shows it: lines end in "\n", a
// last line without one counts, "\r" before "\n" and a byte order mark on
// the first line are not text.
func fileLines(content []byte) []string {
	if len(content) == 0 {
		return nil
	}
	lines := strings.Split(string(content), "\n")
	last := lines[len(lines)-1]
	lines = lines[:len(lines)-1]
	for i := range lines {
		lines[i] = strings.TrimSuffix(lines[i], "\r")
	}
	if last != "" {
		// A last line without a line ending keeps a "\r" it ends in.
		lines = append(lines, last)
	}
	lines[0] = strings.TrimPrefix(lines[0], "\xef\xbb\xbf")
	return lines
}

// checkSource reads data to the end and fails on a broken property:
//
//   - every line of the content is counted exactly once: as the CSV
//     header, as blank, or as one record (event, reject or filtered);
//     at the end Lines is the content's line count and Lines = Header +
//     Blank + Records;
//   - the line numbers are the content's own: each record's FileLine holds
//     exactly the text the reader shows for it (Raw), lines between
//     records are blank (or the header), record numbers go up by one;
//   - events have valid ids and ops, derived ids are those of doc.go,
//     rejects have reasons;
//   - Sum at EOF is the SHA-256 of the whole content; gzip that does not
//     decompress ends in a final error after the complete lines it held.
//
// The fuzz targets run it with the format given and sniffed, with and
// without an amount filter.
func checkSource(t *testing.T, data []byte, format string, opts Options) {
	content, gzErr := data, error(nil)
	if bytes.HasPrefix(data, []byte{0x1f, 0x8b}) {
		zr, err := gzip.NewReader(bytes.NewReader(data))
		if err != nil {
			return
		}
		content, gzErr = io.ReadAll(zr)
	}
	lines := fileLines(content)
	opts.Format = format
	r, err := NewReader("fuzz", bytes.NewReader(data), opts)
	if err != nil {
		return
	}
	csvFormat := r.Format() == "csv"
	isBlank := func(s string) bool {
		if csvFormat {
			return s == ""
		}
		return strings.Trim(s, " \t\r") == ""
	}
	// next is the first line not yet accounted for, from 1.
	next, record := 1, 0
	if csvFormat {
		for next <= len(lines) && lines[next-1] == "" {
			next++
		}
		next++ // the header
	}
	account := func(fileLine, line int, raw []byte) {
		t.Helper()
		if fileLine < next || fileLine > len(lines) {
			t.Fatalf("record at line %d, expected at or after %d of %d", fileLine, next, len(lines))
		}
		for ; next < fileLine; next++ {
			if !isBlank(lines[next-1]) {
				t.Fatalf("line %d %q was skipped but is not blank", next, lines[next-1])
			}
		}
		if text := lines[fileLine-1]; len(text) > MaxLineBytes {
			if !strings.HasPrefix(text, string(raw)) || len(raw) != rawKeep {
				t.Fatalf("line %d: long line shown as %d bytes", fileLine, len(raw))
			}
		} else if string(raw) != text {
			t.Fatalf("line %d is %q, the reader shows %q", fileLine, text, raw)
		}
		if record++; line != record {
			t.Fatalf("line %d: record %d, want %d", fileLine, line, record)
		}
		next = fileLine + 1
	}
	for n := 0; n <= len(content)+1; n++ {
		ev, err := r.Next()
		var le *LineError
		var fe *FilteredError
		switch {
		case err == nil:
			if CheckEvent(ev) != nil || ev.ID == "" {
				t.Fatalf("bad event %+v", ev)
			}
			account(ev.FileLine, ev.Line, r.Raw())
			if derivedRE.MatchString(ev.ID) {
				// The content up to the end of the event's line.
				end := 0
				for i := 0; i < ev.FileLine; i++ {
					k := bytes.IndexByte(content[end:], '\n')
					if k < 0 {
						end = len(content)
						break
					}
					end += k + 1
				}
				if want := prefixID(string(content), end, ev.Line); ev.ID != want && !strings.Contains(string(content), ev.ID) {
					t.Fatalf("line %d: derived id %s, want %s", ev.FileLine, ev.ID, want)
				}
			}
		case errors.As(err, &le):
			if le.Reason == "" {
				t.Fatalf("reject without a reason at line %d", le.FileLine)
			}
			account(le.FileLine, le.Line, le.Raw)
		case errors.As(err, &fe):
			account(fe.FileLine, fe.Line, r.Raw())
		case err == io.EOF:
			if gzErr != nil {
				t.Fatalf("EOF from gzip that does not decompress (%v)", gzErr)
			}
			for ; next <= len(lines); next++ {
				if !isBlank(lines[next-1]) {
					t.Fatalf("line %d %q was never read", next, lines[next-1])
				}
			}
			if r.Lines() != len(lines) || r.Lines() != r.Header()+r.Blank()+r.Records() || r.Records() != record {
				t.Fatalf("Lines %d (content has %d) = Header %d + Blank %d + Records %d (%d seen)",
					r.Lines(), len(lines), r.Header(), r.Blank(), r.Records(), record)
			}
			sum, ok := r.Sum()
			if !ok || sum != sha256.Sum256(content) {
				t.Fatal("Sum is not the SHA-256 of the content")
			}
			return
		default:
			if gzErr == nil {
				t.Fatalf("final error %v on content that reads whole", err)
			}
			if complete := bytes.Count(content, []byte{'\n'}); r.Lines() != complete {
				t.Fatalf("final error after %d lines, the content has %d complete lines: %v", r.Lines(), complete, err)
			}
			return
		}
	}
	t.Fatal("more results than bytes of input")
}

func fuzzAll(t *testing.T, data []byte, format string) {
	checkSource(t, data, format, Options{})
	checkSource(t, data, "", Options{})
	checkSource(t, data, format, Options{MinAmount: "10", Columns: map[string]string{"sign": "s"}})
}

func FuzzCSV(f *testing.F) {
	f.Add([]byte("ts,op,src,dst\n2026-03-01T09:30:00Z,add,a,b\n,remove,\"b\nc\",d\n"))
	f.Add([]byte("src,dst,id\r\na,b,1\r\n\r\n,,\n\"x\"y,z\n"))
	f.Add([]byte("\n\nsrc,dst,amount,s\na,b,12,-\na,b,9.5,+\n\"a,\"\"q\",b,\"10\",\nx,y,z,w,v\n\xef\xbb\xbfa,b,1,+"))
	f.Fuzz(func(t *testing.T, data []byte) { fuzzAll(t, data, "csv") })
}

func FuzzJSONL(f *testing.F) {
	f.Add([]byte("{\"src\":\"a\",\"dst\":\"b\",\"ts\":1772357400250,\"op\":\"remove\"}\n\n{\"src\":1,\"dst\":\"\\u00e9\"}\n"))
	f.Add([]byte("{\"src\":\"a\",\"dst\":{\"k\":[\"]\"]}}\n[1]\n{\"src\n"))
	f.Add([]byte(" \t\r\n{\"src\":\"a\",\"dst\":\"b\",\"amount\":10,\"s\":\"-\",\"x\":1}\r\n{\"src\":\"a\",\"src\":\"b\"}\n{\"src\":\"a\\u0000\",\"dst\":\"b\",\"amount\":\"11\"}"))
	f.Fuzz(func(t *testing.T, data []byte) { fuzzAll(t, data, "jsonl") })
}

// FuzzGzip feeds the same checks gzip content, whole, cut short or
// altered, so that a stream that ends early is seen to name its last line.
func FuzzGzip(f *testing.F) {
	for _, s := range []string{
		"src,dst\na,b\nc,d\n",
		"{\"src\":\"a\",\"dst\":\"b\"}\n\n{\"src\":\"c\",\"dst\":\"d\"}",
		"src,dst,amount\n" + strings.Repeat("a,b,12\nc,d,3\n", 300),
	} {
		var buf bytes.Buffer
		zw := gzip.NewWriter(&buf)
		zw.Write([]byte(s))
		zw.Close()
		f.Add(buf.Bytes())
		f.Add(buf.Bytes()[:buf.Len()*2/3])
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		if !bytes.HasPrefix(data, []byte{0x1f, 0x8b}) {
			data = append([]byte{0x1f, 0x8b}, data...)
		}
		fuzzAll(t, data, "")
	})
}
