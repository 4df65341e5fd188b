package main

import (
	"bytes"
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

func TestBadArgs(t *testing.T) {
	for _, args := range [][]string{{"-events", "1"}, {"-nodes", "3", "-m", "3"}, {"extra"}} {
		var out, errs bytes.Buffer
		if err := run(args, &out, &errs); err == nil {
			t.Errorf("%v: no error", args)
		}
	}
}
