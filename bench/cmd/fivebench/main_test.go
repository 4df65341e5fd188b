package main

import (
	"bytes"
	"os"
	"strings"
	"testing"
)

// TestTables runs the command on small graphs and checks the shape of
// both tables and that networkx.triangles was timed.
func TestTables(t *testing.T) {
	if os.Getenv("ORBITWATCH_PYTHON") == "" {
		t.Setenv("ORBITWATCH_PYTHON", "/usr/bin/python3")
	}
	var out, errs bytes.Buffer
	args := []string{"-nodes", "300,600", "-m", "3", "-events", "60", "-eager-events", "10", "-cuts", "1,100"}
	if err := run(args, &out, &errs); err != nil {
		t.Fatalf("%v\n%s", err, errs.String())
	}
	s := out.String()
	var static, incr []string
	for _, l := range strings.Split(s, "\n") {
		switch {
		case strings.HasPrefix(l, "| BA("):
			static = append(static, l)
		case strings.HasPrefix(l, "| eager") || strings.HasPrefix(l, "| five.Counter"):
			incr = append(incr, l)
		}
	}
	if len(static) != 2 || len(incr) != 2 {
		t.Fatalf("%d static rows (want 2), %d incremental rows (want 2):\n%s", len(static), len(incr), s)
	}
	for _, r := range static {
		cells := strings.Split(strings.Trim(r, "|"), "|")
		if len(cells) != 8 || strings.TrimSpace(cells[5]) == "—" || !strings.HasSuffix(strings.TrimSpace(cells[6]), "×") {
			t.Errorf("static row without a networkx time and ratio: %q", r)
		}
	}
	for _, r := range incr {
		if cells := strings.Split(strings.Trim(r, "|"), "|"); len(cells) != 4 {
			t.Errorf("incremental row %q has %d cells, want 4", r, len(cells))
		}
	}
	if !strings.Contains(s, "reaches 2,000 events/s from cuts of") {
		t.Errorf("no break-even line:\n%s", s)
	}
}

func TestBadFlags(t *testing.T) {
	for _, args := range [][]string{{"-nodes", "x"}, {"-cuts", "0"}, {"-events", "1"}} {
		var out, errs bytes.Buffer
		if err := run(append(args, "-no-networkx"), &out, &errs); err == nil {
			t.Errorf("%v: no error", args)
		}
	}
}
