package stream

import (
	"bytes"
	"fmt"
	"io"
	"testing"
)

// benchLog is a fictional payments log of n events in the given format.
func benchLog(n int, format string) []byte {
	var b bytes.Buffer
	if format == "csv" {
		b.WriteString("ts,op,src,dst,amount\n")
	}
	for i := 0; i < n; i++ {
		src, dst := fmt.Sprintf("acct-%06d", i*7919%50000), fmt.Sprintf("acct-%06d", i*104729%50000)
		ts := 1772357400 + int64(i)
		if format == "csv" {
			fmt.Fprintf(&b, "%d,add,%s,%s,%d.%02d\n", ts, src, dst, i%900, i%100)
		} else {
			fmt.Fprintf(&b, "{\"ts\":%d,\"op\":\"add\",\"src\":%q,\"dst\":%q,\"amount\":%d}\n", ts, src, dst, i%900)
		}
	}
	return b.Bytes()
}

func benchmarkSource(b *testing.B, format string) {
	const n = 100_000
	data := benchLog(n, format)
	b.SetBytes(int64(len(data)))
	b.ReportAllocs()
	for b.Loop() {
		r, err := NewReader("bench", bytes.NewReader(data), Options{Format: format})
		if err != nil {
			b.Fatal(err)
		}
		for {
			if _, err := r.Next(); err == io.EOF {
				break
			} else if err != nil {
				b.Fatal(err)
			}
		}
	}
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N*n), "ns/event")
}

func BenchmarkCSV(b *testing.B)   { benchmarkSource(b, "csv") }
func BenchmarkJSONL(b *testing.B) { benchmarkSource(b, "jsonl") }
