package main

import (
	"bytes"
	"image/png"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func TestTable(t *testing.T) {
	var out, errs bytes.Buffer
	args := []string{"-nodes", "400", "-m", "3", "-directed-events", "3000", "-events", "40"}
	if err := run(args, &out, &errs); err != nil {
		t.Fatalf("%v\n%s", err, errs.String())
	}
	s := out.String()
	if !strings.HasPrefix(s, "```\ngo run ./bench/cmd/orbitbench "+strings.Join(args, " ")+"\n```\n") {
		t.Fatalf("command line missing above the table:\n%s", s)
	}
	var rows []string
	for _, l := range strings.Split(s, "\n") {
		if strings.HasPrefix(l, "| ba-") || strings.HasPrefix(l, "| directed-") {
			rows = append(rows, l)
		}
	}
	// Two undirected engines on the BA graph, one directed engine.
	if len(rows) != 3 {
		t.Fatalf("%d rows, want 3:\n%s", len(rows), s)
	}
	for _, r := range rows {
		if cells := strings.Split(strings.Trim(r, "|"), "|"); len(cells) != 12 {
			t.Fatalf("row %q has %d cells, want 12", r, len(cells))
		}
	}
	if !strings.Contains(rows[0], "(undirected/4)") || strings.Contains(rows[0], "| – | – |") {
		t.Errorf("BA row lacks the recount or networkx cells: %s", rows[0])
	}
	if !strings.HasSuffix(rows[2], "| – | – |") {
		t.Errorf("directed row should have no networkx cells: %s", rows[2])
	}
}

func TestScalingPlot(t *testing.T) {
	dir := t.TempDir()
	var out, errs bytes.Buffer
	if err := run([]string{"-nodes", "0", "-directed-events", "0", "-events", "20", "-scaling", "200,400", "-plot", dir}, &out, &errs); err != nil {
		t.Fatalf("%v\n%s", err, errs.String())
	}
	if !strings.Contains(out.String(), "\n| 200 |") || !strings.Contains(out.String(), "\n| 400 |") {
		t.Fatalf("scaling table missing:\n%s", out.String())
	}
	svg, err := os.ReadFile(filepath.Join(dir, "scaling.svg"))
	if err != nil {
		t.Fatal(err)
	}
	if n := strings.Count(string(svg), `class="series"`); n != 2 {
		t.Errorf("scaling.svg has %d series, want one per undirected engine (2)", n)
	}
	f, err := os.Open(filepath.Join(dir, "scaling.png"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	if _, err := png.Decode(f); err != nil {
		t.Errorf("scaling.png: %v", err)
	}
}

func TestBadArgs(t *testing.T) {
	for _, args := range [][]string{{"-events", "1"}, {"-nodes", "3", "-m", "3"}, {"extra"}, {"-scaling", "100,x"}} {
		var out, errs bytes.Buffer
		if err := run(args, &out, &errs); err == nil {
			t.Errorf("%v: no error", args)
		}
	}
}
