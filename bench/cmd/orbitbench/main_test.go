package main

import (
	"bytes"
	"image/png"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// rows returns the table rows of s that start with prefix.
func rows(s, prefix string) []string {
	var out []string
	for _, l := range strings.Split(s, "\n") {
		if strings.HasPrefix(l, prefix) {
			out = append(out, l)
		}
	}
	return out
}

func cells(row string) []string {
	c := strings.Split(strings.Trim(row, "|"), "|")
	for i := range c {
		c[i] = strings.TrimSpace(c[i])
	}
	return c
}

func TestTables(t *testing.T) {
	var out, errs bytes.Buffer
	args := []string{"-sizes", "300,600", "-m", "3", "-merchant-nodes", "600", "-events", "40", "-per-class", "10", "-reads", "50", "-rounds", "2"}
	if err := run(args, &out, &errs); err != nil {
		t.Fatalf("%v\n%s", err, errs.String())
	}
	s := out.String()
	if !strings.HasPrefix(s, "```\ngo run ./bench/cmd/orbitbench "+strings.Join(args, " ")+"\n```\n") {
		t.Fatalf("command line missing above the tables:\n%s", s)
	}
	// Per event, reads: one row per graph, the merchant's graph after
	// its plain one; memory: one per size.
	graphs := rows(s, "| BA(")
	if len(graphs) != 2*3+2 {
		t.Fatalf("%d graph rows, want 8:\n%s", len(graphs), s)
	}
	ev := cells(graphs[2])
	if ev[0] != "BA(600, 3) + merchant" || ev[1] != "601" || len(ev) != 10 {
		t.Fatalf("merchant row %q", graphs[2])
	}
	// BA(600, 3) has 3·4/2 + 596·3 = 1794 edges; the merchant adds its
	// distinct customers, who make it the node of largest degree.
	if cells(graphs[1])[2] != "1794" {
		t.Errorf("BA(600, 3) row %q: want 1794 edges", graphs[1])
	}
	if cells(graphs[4])[2] == "–" || !strings.Contains(graphs[5], "(degree "+ev[3]+")") {
		t.Errorf("reads rows lack a figure or the merchant's degree %s:\n%s\n%s", ev[3], graphs[4], graphs[5])
	}
	if m := rows(s, "| with the merchant |"); len(m) != 1 || !strings.Contains(m[0], "×") {
		t.Errorf("merchant ratio row missing:\n%s", s)
	}
	if !strings.Contains(s, "("+ev[3]+" customers)") {
		t.Errorf("the merchant's customers are not named as its degree %s:\n%s", ev[3], s)
	}
	for _, r := range graphs[6:] {
		if c := cells(r); len(c) != 7 || c[2] == "0 (0)" {
			t.Errorf("memory row %q", r)
		}
	}
}

func TestPlot(t *testing.T) {
	dir := t.TempDir()
	var out, errs bytes.Buffer
	if err := run([]string{"-sizes", "200,400", "-merchant", "0", "-memory=false", "-events", "20", "-per-class", "5", "-reads", "10", "-plot", dir}, &out, &errs); err != nil {
		t.Fatalf("%v\n%s", err, errs.String())
	}
	svg, err := os.ReadFile(filepath.Join(dir, "per-event.svg"))
	if err != nil {
		t.Fatal(err)
	}
	if n := strings.Count(string(svg), `class="series"`); n != 5 {
		t.Errorf("per-event.svg has %d series, want uniform and one per degree class (5)", n)
	}
	f, err := os.Open(filepath.Join(dir, "per-event.png"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	if _, err := png.Decode(f); err != nil {
		t.Errorf("per-event.png: %v", err)
	}
}

func TestBadArgs(t *testing.T) {
	for _, args := range [][]string{{"-events", "1"}, {"-sizes", "3", "-m", "3"}, {"extra"}, {"-sizes", "100,x"},
		{"-merchant", "2"}, {"-sizes", "500", "-merchant-nodes", "600"}} {
		var out, errs bytes.Buffer
		if err := run(args, &out, &errs); err == nil {
			t.Errorf("%v: no error", args)
		}
	}
}
