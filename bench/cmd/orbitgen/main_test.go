package main

import (
	"bytes"
	"compress/gzip"
	"encoding/csv"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func TestWritesGzipLog(t *testing.T) {
	out := filepath.Join(t.TempDir(), "ba.csv.gz")
	var stdout, stderr bytes.Buffer
	if err := run([]string{"-shape", "ba", "-nodes", "300", "-m", "2", "-churn", "7", "-out", out, "-quiet"}, &stdout, &stderr); err != nil {
		t.Fatal(err)
	}
	// BA: 3 + (300−3)·2 = 597 edges as adds, then 7 remove/add pairs.
	if !strings.Contains(stdout.String(), "shape=ba seed=1 nodes=300 events=611 ") {
		t.Fatalf("summary %q", stdout.String())
	}
	f, err := os.Open(out)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	zr, err := gzip.NewReader(f)
	if err != nil {
		t.Fatal(err)
	}
	recs, err := csv.NewReader(zr).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	if len(recs) != 612 || strings.Join(recs[0], ",") != "ts,op,src,dst" {
		t.Fatalf("%d records, header %v", len(recs), recs[0])
	}
	removes := 0
	for _, r := range recs[1:] {
		if r[1] == "remove" {
			removes++
		}
	}
	if removes != 7 {
		t.Fatalf("%d removes, want 7", removes)
	}
}

func TestStdoutKeepsOnlyTheLog(t *testing.T) {
	var stdout, stderr bytes.Buffer
	if err := run([]string{"-shape", "directed-payments", "-events", "500", "-out", "-", "-quiet"}, &stdout, &stderr); err != nil {
		t.Fatal(err)
	}
	recs, err := csv.NewReader(&stdout).ReadAll()
	if err != nil || len(recs) != 501 {
		t.Fatalf("%d records, %v", len(recs), err)
	}
	if !strings.Contains(stderr.String(), "events=500 ") {
		t.Fatalf("summary %q", stderr.String())
	}
}

func TestBadFlags(t *testing.T) {
	for _, args := range [][]string{
		{"-shape", "ring", "-out", "x"},
		{"-shape", "ba", "-nodes", "3", "-m", "5", "-out", "x"},
		{"-shape", "ba"},
	} {
		var o, e bytes.Buffer
		if err := run(args, &o, &e); err == nil {
			t.Errorf("%v: no error", args)
		}
	}
}
