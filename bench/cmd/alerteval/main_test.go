package main

import (
	"bytes"
	"strings"
	"testing"
	"time"

	"orbitwatch/bench/demo"
	"orbitwatch/bench/demo/evaluate"
	"orbitwatch/delta"
)

// TestReport runs the small scenario for each kind and checks the report
// has a line, with its rule, for every pattern meant for the kind and for
// the quiet ones, and none for the others. Whether the rules find the
// patterns is bench/demo's TestDemoRules.
func TestReport(t *testing.T) {
	sc := demo.Generate(demo.SmallConfig())
	for _, c := range []struct {
		kind delta.Kind
		k    int
	}{{delta.Undirected, 4}, {delta.Directed, 3}, {delta.Signed, 3}} {
		res, ac, err := evaluate.RunDemo(sc, c.kind, c.k, t.TempDir(), time.Minute)
		if err != nil {
			t.Fatal(err)
		}
		if res.Primed == 0 || res.From.Before(sc.Config.Start.Add(ac.Lookback)) {
			t.Fatalf("%d priming cuts, evaluation from %s: want priming for the first look-back after %s", res.Primed, res.From, sc.Config.Start)
		}
		var buf bytes.Buffer
		Report(&buf, sc, c.kind, c.k, res, "demo rules", time.Minute)
		for _, p := range sc.Patterns {
			rule, meant := p.FoundWith(c.kind, c.k)
			line := "| " + p.Name + " | " + rule + " |"
			if p.Quiet {
				line = "| " + p.Name + " (" + p.Nodes[0] + ", quiet)"
			}
			if has := strings.Contains(buf.String(), line); has != (meant || p.Quiet) {
				t.Errorf("%v 2–%d: report has line %q: %v, want %v:\n%s", c.kind, c.k, line, has, meant || p.Quiet, buf.String())
			}
		}
	}
}
