package main

import (
	"bytes"
	"strings"
	"testing"
	"time"

	"orbitwatch/bench/demo"
	"orbitwatch/delta"
	"orbitwatch/shard"
)

// TestSmallScenario runs the evaluation on the small scenario: every
// planted pattern is alerted on an expected node no later than 10 s of
// event time after its last payment, the hub raises nothing, and the
// report carries one line per pattern.
func TestSmallScenario(t *testing.T) {
	sc := demo.Generate(demo.SmallConfig())
	counting, err := shard.NewCounting(delta.Undirected, 4)
	if err != nil {
		t.Fatal(err)
	}
	ac, err := demo.AlertConfig(counting.Catalog)
	if err != nil {
		t.Fatal(err)
	}
	res, err := Run(sc, counting, ac, t.TempDir(), 10*time.Second)
	if err != nil {
		t.Fatal(err)
	}
	if res.Primed == 0 || res.From.Before(sc.Config.Start.Add(ac.Lookback)) {
		t.Fatalf("%d priming cuts, evaluation from %s: want priming for the first look-back after %s", res.Primed, res.From, sc.Config.Start)
	}
	out, _ := Score(sc, res.Alerts)
	for _, o := range out {
		switch {
		case o.Pattern.Quiet && o.Alerts != 0:
			t.Errorf("quiet %s: %d alerts (%v)", o.Pattern.Name, o.Alerts, o.Rules)
		case !o.Pattern.Quiet && o.First == nil:
			t.Errorf("%s: no alert on %v", o.Pattern.Name, o.Pattern.Expect)
		case !o.Pattern.Quiet && o.Delay > 10*time.Second:
			t.Errorf("%s: first alert %s after completion", o.Pattern.Name, o.Delay)
		}
	}
	var buf bytes.Buffer
	Report(&buf, sc, res, "demo rules", 10*time.Second)
	for _, p := range sc.Patterns {
		if !strings.Contains(buf.String(), "| "+p.Name) {
			t.Errorf("report has no line for %s:\n%s", p.Name, buf.String())
		}
	}
}

func TestFalseRate(t *testing.T) {
	// 3 alerts on 20k nodes over 12 h: 3 / 2 / 0.5 = 3 per 10k per day.
	if got := FalseRate(3, 20000, 12*time.Hour); got != 3 {
		t.Fatalf("FalseRate = %v, want 3", got)
	}
	if got := FalseRate(3, 20000, 0); got != 0 {
		t.Fatalf("FalseRate over no time = %v, want 0", got)
	}
}
