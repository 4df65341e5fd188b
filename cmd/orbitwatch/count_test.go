package main

import (
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"
)

// TestCountFiveNodes counts a log's 2–5 node orbits: the recount shows its
// progress (four passes over every node) on standard error, and the
// first 15 columns, orbits 0–14 in both catalogs, equal the 2–4 count of
// the same log.
func TestCountFiveNodes(t *testing.T) {
	dir := t.TempDir()
	log := filepath.Join(dir, "log.csv")
	writeLog(t, log, 3000, 7)
	five := mustRunCmd(t, "count", "--input", log, "--max-nodes", "5")
	four := mustRunCmd(t, "count", "--input", log, "--max-nodes", "4")
	for name, r := range map[string]result{"five.csv": five, "four.csv": four} {
		if err := os.WriteFile(filepath.Join(dir, name), []byte(r.stdout), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	order, rows5 := readMatrix(t, filepath.Join(dir, "five.csv"))
	_, rows4 := readMatrix(t, filepath.Join(dir, "four.csv"))
	if want := "recount: done, " + strconv.Itoa(4*len(order)) + " node passes"; !strings.Contains(five.stderr, want) {
		t.Fatalf("count --max-nodes 5: no %q on stderr:\n%s", want, five.stderr)
	}
	if strings.Contains(four.stderr, "node passes") {
		t.Fatalf("count --max-nodes 4 reported a recount's progress:\n%s", four.stderr)
	}
	if len(rows5) != len(rows4) || len(order) == 0 {
		t.Fatalf("%d rows with 5 nodes, %d with 4", len(rows5), len(rows4))
	}
	for _, n := range order {
		if len(rows5[n]) != 73 || !slices.Equal(rows5[n][:15], rows4[n]) {
			t.Fatalf("%s: 2–5 orbits 0–14 %v, 2–4 count %v", n, rows5[n][:min(15, len(rows5[n]))], rows4[n])
		}
	}
}
