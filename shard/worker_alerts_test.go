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
		c := mustCounting(t, delta.Undirected, 4)
		cfg, err := demo.AlertConfig(c.Catalog)
		if err != nil {
			t.Fatal(err)
		}
		nc, _ := connect(t, srv.URL())
		st, err := storage.Open(filepath.Join(dir, fmt.Sprint(i)), storage.Settings{Kind: delta.Undirected, MaxNodes: 4, NumOrbits: c.Catalog.NumOrbits()})
		if err != nil {
			t.Fatal(err)
		}
		ws = append(ws, runWorker(t, WorkerConfig{Conn: nc, Stream: "DEMO", Subject: "demo.events", Shard: i, Shards: shards, Batch: 64, Counting: c, Store: st,
			Alerts: alert.New(cfg, c.Catalog)}))
	}
	waitCut(t, ws, uint64(len(log)))

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
	for _, p := range sc.Patterns {
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

// BenchmarkAlertStageCut measures one cut's evaluation in the worker's
// alert stage on the small demo scenario: the look-back read of every
// touched node's baseline from Badger and the scoring of the demo rules.
// The cut is the scenario's last structural change after the whole story,
// committed cut by cut every 50 events before it; touched/cut reports the
// nodes it scores.
func BenchmarkAlertStageCut(b *testing.B) {
	sc := demo.Generate(demo.SmallConfig())
	c, err := NewCounting(delta.Undirected, 4)
	if err != nil {
		b.Fatal(err)
	}
	cfg, err := demo.AlertConfig(c.Catalog)
	if err != nil {
		b.Fatal(err)
	}
	st, err := storage.Open(b.TempDir(), storage.Settings{Kind: delta.Undirected, MaxNodes: 4, NumOrbits: c.Catalog.NumOrbits()})
	if err != nil {
		b.Fatal(err)
	}
	defer st.Close()
	a := NewApplier(c, 0)
	stage := NewAlertStage(alert.New(cfg, c.Catalog))
	last := len(sc.Events) - 1
	for last > 0 && !structural(sc, last) {
		last--
	}
	if last == 0 {
		b.Fatal("no structural change in the scenario")
	}
	for i, e := range sc.Events[:last] {
		seq := uint64(i + 1)
		if err := a.Apply(seq, e); err != nil {
			b.Fatal(err)
		}
		if seq%50 != 0 && i != last-1 {
			continue
		}
		if _, err := stage.Evaluate(st, a, nil, alertCut(a, seq, time.Time{})); err != nil {
			b.Fatal(err)
		}
		if err := st.Commit(a.Checkpoint(nil)); err != nil {
			b.Fatal(err)
		}
		a.ResetTouched()
	}
	if err := a.Apply(uint64(last+1), sc.Events[last]); err != nil {
		b.Fatal(err)
	}
	cut := alertCut(a, uint64(last+1), time.Time{})
	b.ReportAllocs()
	b.ResetTimer()
	for range b.N {
		if _, err := stage.Evaluate(st, a, nil, cut); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(len(a.Touched())), "touched/cut")
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
