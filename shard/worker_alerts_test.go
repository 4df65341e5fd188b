package shard

import (
	"context"
	"fmt"
	"path/filepath"
	"slices"
	"testing"
	"time"

	"orbitwatch/bench/demo"
	"orbitwatch/delta"
	"orbitwatch/shard/alert"
	"orbitwatch/storage"
)

// TestWorkersAlertOnOwnedNodes runs the small demo story through three
// workers with the demo's rules: every planted pattern is alerted on one
// of its expected nodes, the quiet hub never, each alert is stored by the
// shard owning its node and no id appears twice; every worker's in-memory
// graph answers neighbourhood reads alike.
func TestWorkersAlertOnOwnedNodes(t *testing.T) {
	sc := demo.Generate(demo.SmallConfig())
	log := make([]busMsg, len(sc.Events))
	for i, e := range sc.Events {
		log[i] = busMsg{ev: e}
	}
	srv := startServer(t)
	_, js := connect(t, srv.URL())
	publishLog(t, js, "DEMO", "demo.events", log)
	const shards = 3
	dir := t.TempDir()
	var ws []*runningWorker
	for i := range shards {
		c, cfg := demoRules(t)
		nc, _ := connect(t, srv.URL())
		st, err := storage.Open(filepath.Join(dir, fmt.Sprint(i)), storage.Settings{Kind: delta.Undirected, MaxNodes: 4, NumOrbits: c.Catalog.NumOrbits()})
		if err != nil {
			t.Fatal(err)
		}
		ws = append(ws, runWorker(t, WorkerConfig{Conn: nc, Stream: "DEMO", Subject: "demo.events", Shard: i, Shards: shards, Cuts: demoCuts, Counting: c, Store: st,
			Alerts: alert.New(cfg, c.Catalog)}))
	}
	waitApplied(t, ws, uint64(len(log)))
	waitCommitted(t, ws, lastCut(t, log, demoCuts))

	var all []alert.Alert
	seen := map[string]bool{}
	for i, rw := range ws {
		recs, err := rw.st.Alerts(storage.AlertFilter{})
		if err != nil {
			t.Fatal(err)
		}
		for _, r := range recs {
			a, err := alert.FromRecord(r)
			if err != nil {
				t.Fatal(err)
			}
			if OwnerOf(a.Node, shards) != i {
				t.Errorf("alert %s on %s stored by shard %d, owner %d", a.ID, a.Node, i, OwnerOf(a.Node, shards))
			}
			if seen[a.ID] {
				t.Errorf("alert id %s twice", a.ID)
			}
			seen[a.ID] = true
			all = append(all, a)
		}
	}
	// The patterns the undirected rules are to find, and the quiet ones.
	for _, p := range sc.Expected(delta.Undirected, 4) {
		hit := slices.ContainsFunc(all, func(a alert.Alert) bool { return slices.Contains(p.Expect, a.Node) })
		quiet := !slices.ContainsFunc(all, func(a alert.Alert) bool { return slices.Contains(p.Nodes, a.Node) })
		if p.Quiet && !quiet || !p.Quiet && !hit {
			t.Errorf("%s (quiet %v): alerted %v, any alert on its nodes %v", p.Name, p.Quiet, hit, !quiet)
		}
	}

	member := sc.Pattern("clique").Nodes[0]
	for i, rw := range ws {
		ctx, cancel := context.WithTimeout(context.Background(), 5*time.Second)
		nb, err := rw.w.Neighbors(ctx, member, 10)
		cancel()
		if err != nil || !nb.Found || nb.Degree != 4 || len(nb.Edges) != 6 {
			t.Fatalf("shard %d: neighbours of clique member %s: %+v %v", i, member, nb, err)
		}
		ctx, cancel = context.WithTimeout(context.Background(), 5*time.Second)
		nb, err = rw.w.Neighbors(ctx, "acct-nobody", 10)
		cancel()
		if err != nil || nb.Found {
			t.Fatalf("shard %d: unknown node found: %+v %v", i, nb, err)
		}
	}
	for _, rw := range ws {
		rw.stop(t)
	}
}

// BenchmarkAlertStageCut measures one cut's evaluation in the alert stage
// on the small demo scenario: the vectors of the nodes whose records
// changed (from the counter), their look-back baselines (from the
// trailing baseline state) and the scoring of the demo rules. The
// scenario is applied up to its last cut with changes, which is evaluated
// again and again; changed/cut reports the nodes it scores.
func BenchmarkAlertStageCut(b *testing.B) {
	sc := demo.Generate(demo.SmallConfig())
	c, cfg := demoRules(b)
	a := NewApplier(c, 0, demoCuts)
	stage := NewAlertStage(alert.New(cfg, c.Catalog), c)
	var last *storage.Checkpoint
	a.OnCut = func(cp *storage.Checkpoint) error {
		keep := *cp
		if _, err := stage.Evaluate(a, cp, nil, time.Time{}); err != nil {
			return err
		}
		if len(keep.Records) > 0 {
			last = &keep
		}
		return nil
	}
	for i, e := range sc.Events {
		if err := a.Apply(uint64(i+1), e); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportAllocs()
	b.ResetTimer()
	for range b.N {
		cp := *last
		cp.Blobs = map[string][]byte{}
		if _, err := stage.Evaluate(a, &cp, nil, time.Time{}); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(len(last.Records)), "changed/cut")
}

// demoCuts are the cuts of the demo: its payments are ten seconds apart.
var demoCuts = Cuts{Every: time.Minute}

// lastCut returns the position of the last cut the log makes on its own
// (not the end of the log).
func lastCut(t *testing.T, log []busMsg, cuts Cuts) uint64 {
	t.Helper()
	var last uint64
	applyLog(t, mustCounting(t, delta.Undirected, 3), 0, cuts, log, func(cp *storage.Checkpoint) error { last = cp.Seq; return nil })
	return last
}

// structural reports whether event i of sc is the first payment between
// its two nodes (a new edge of the simple graph).
func structural(sc *demo.Scenario, i int) bool {
	e := sc.Events[i]
	for _, f := range sc.Events[:i] {
		if f.Src == e.Src && f.Dst == e.Dst || f.Src == e.Dst && f.Dst == e.Src {
			return false
		}
	}
	return true
}

// demoRules returns undirected 2–4 counting and the demo's alert rules
// over its catalog.
func demoRules(tb testing.TB) (*Counting, alert.Config) {
	tb.Helper()
	c := mustCounting(tb, delta.Undirected, 4)
	rules, err := demo.AlertConfig(c.Catalog)
	if err != nil {
		tb.Fatal(err)
	}
	return c, rules
}
