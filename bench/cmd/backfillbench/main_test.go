package main

import (
	"bytes"
	"strings"
	"testing"
	"time"

	"orbitwatch/bench"
	"orbitwatch/bench/gen"
)

func TestParseGraphs(t *testing.T) {
	g, err := parseGraphs("ba:2000:3, payments:100:1", 5, 0.2)
	if err != nil {
		t.Fatal(err)
	}
	var names []string
	for _, x := range g {
		names = append(names, x.name)
	}
	want := "BA(2k, 5) seed 3|BA(2k, 5) seed 3 + merchant|payments(100 households) seed 1"
	if got := strings.Join(names, "|"); got != want {
		t.Fatalf("graphs %q, want %q", got, want)
	}
	for _, bad := range []string{"ba:5:1", "ring:100:1", "ba:100", "ba:x:1", "payments:10:1"} {
		if _, err := parseGraphs(bad, 5, 0); err == nil {
			t.Errorf("%q: no error", bad)
		}
	}
}

// The ratios are sums over rounds and per-round quotients: two rounds of
// a backfill taking 2 s and 4 s against networkx taking 1 s and 1 s give
// 3.00× overall, 2.00–4.00 by round; the merchant graph, twice as many
// events in three times the time, costs 1.50× per event, and each of its
// 10 extra events (3·3 s − 3 s over 10, 600,000 µs) twice a plain event.
func TestRatios(t *testing.T) {
	specs, err := parseGraphs("ba:100:1", 5, 0.2)
	if err != nil {
		t.Fatal(err)
	}
	specs[0].edges, specs[1].edges = make([]gen.Edge, 10), make([]gen.Edge, 20)
	specs[1].customers = 10
	var results []result
	for r, wall := range []time.Duration{2 * time.Second, 4 * time.Second} {
		for i, scale := range []time.Duration{1, 3} {
			br := backfillRun{wall: wall * scale, cpu: wall * scale / 2, cuts: 1, records: 2, alerts: 3}
			results = append(results, result{graph: &specs[i], round: r + 1, load: "0.5",
				runs: map[string]backfillRun{"default": br, "no-alerts": br},
				nx:   bench.NetworkxRun{Wall: time.Second, CPU: time.Second}})
		}
	}
	var out bytes.Buffer
	modes := []string{"default", "no-alerts"}
	writeRuns(&out, results, modes, true)
	writeRatios(&out, specs, results, modes)
	writeMerchant(&out, specs, results, modes, 0.2)
	s := out.String()
	for _, want := range []string{
		"| BA(100, 5) seed 1 | 10 | 1 | 0.5 | 2.0 (1.0) | 2.0 (1.0) | 1.0 (1.0) | 2.00× (1.00×) | 2.00× (1.00×) | 1 | 2 | 3 |",
		"| BA(100, 5) seed 1 | 10 | 3 | 3.00× (1.50×), 2.00–4.00 (1.00–2.00) | 3.00× (1.50×), 2.00–4.00 (1.00–2.00) |",
		"| BA(100, 5) seed 1 + merchant | 10 | 20 | 450000.0 (225000.0) | 1.50× (1.50×), 1.50–1.50 (1.50–1.50) | 600000 (2.0×) (300000 (2.0×)) |",
	} {
		if !strings.Contains(s, want) {
			t.Errorf("missing %q in:\n%s", want, s)
		}
	}
}
