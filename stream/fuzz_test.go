package stream

import (
	"bytes"
	"crypto/sha256"
	"errors"
	"io"
	"testing"
)

// checkSource reads data to the end and fails on a broken property: every
// event has non-empty src and dst and a valid op, line numbers of events
// and rejects strictly increase, Sum at EOF is the SHA-256 of the whole
// input (every byte hashed once, in order), and the reader ends (there cannot be more
// records than bytes). The fuzz targets run it with the format given and
// with the format sniffed from the content.
func checkSource(t *testing.T, data []byte, format string) {
	r, err := NewReader("fuzz", bytes.NewReader(data), Options{Format: format})
	if err != nil {
		return
	}
	last := 0
	for n := 0; n <= len(data)+1; n++ {
		ev, err := r.Next()
		var le *LineError
		line := 0
		switch {
		case err == nil:
			if ev.Src == "" || ev.Dst == "" || !ev.Op.Valid() || ev.ID == "" {
				t.Fatalf("bad event %+v", ev)
			}
			line = ev.Line
		case errors.As(err, &le):
			if le.Reason == "" {
				t.Fatalf("reject without a reason at line %d", le.Line)
			}
			line = le.Line
		case err == io.EOF:
			sum, ok := r.Sum()
			if !ok {
				t.Fatal("no Sum at EOF")
			}
			if !bytes.HasPrefix(data, []byte{0x1f, 0x8b}) && sum != sha256.Sum256(data) {
				t.Fatal("Sum is not the SHA-256 of the content")
			}
			return
		default:
			return
		}
		if line <= last {
			t.Fatalf("line %d after line %d", line, last)
		}
		last = line
	}
	t.Fatal("more results than bytes of input")
}

func FuzzCSV(f *testing.F) {
	f.Add([]byte("ts,op,src,dst\n2026-03-01T09:30:00Z,add,a,b\n,remove,\"b\nc\",d\n"))
	f.Add([]byte("src,dst,id\r\na,b,1\r\n\r\n,,\n\"x\"y,z\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		checkSource(t, data, "csv")
		checkSource(t, data, "")
	})
}

func FuzzJSONL(f *testing.F) {
	f.Add([]byte("{\"src\":\"a\",\"dst\":\"b\",\"ts\":1772357400250,\"op\":\"remove\"}\n\n{\"src\":1,\"dst\":\"\\u00e9\"}\n"))
	f.Add([]byte("{\"src\":\"a\",\"dst\":{\"k\":[\"]\"]}}\n[1]\n{\"src\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		checkSource(t, data, "jsonl")
		checkSource(t, data, "")
	})
}
