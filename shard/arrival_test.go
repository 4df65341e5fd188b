package shard

import (
	"fmt"
	"testing"
	"time"

	"orbitwatch/delta"
	"orbitwatch/storage"
)

// storedHistory is what a store holds of a log: its cuts, and at every cut
// every node's stored record and adjacency.
type storedHistory struct {
	cuts    []storage.CheckpointInfo
	records [][]string // by cut, by node
}

// readHistory reads every cut of st up to last.
func readHistory(t *testing.T, st *storage.Store, last uint64) storedHistory {
	t.Helper()
	var h storedHistory
	for _, cp := range st.Checkpoints() {
		if cp.Seq > last {
			break
		}
		h.cuts = append(h.cuts, cp)
		src, err := st.SourceAt(cp.Seq)
		if err != nil {
			t.Fatal(err)
		}
		var recs []string
		var adj []delta.Adj
		for x := range uint32(cp.Nodes) {
			b, err := src.Record(x)
			if err != nil {
				t.Fatal(err)
			}
			name, err := src.Name(x)
			if err != nil {
				t.Fatal(err)
			}
			if adj, err = src.Adjacent(x, adj); err != nil {
				t.Fatal(err)
			}
			recs = append(recs, fmt.Sprintf("%s %x %v", name, b, adj))
		}
		src.Close()
		h.records = append(h.records, recs)
	}
	return h
}

func sameHistory(t *testing.T, what string, got, want storedHistory) {
	t.Helper()
	if len(got.cuts) != len(want.cuts) {
		t.Fatalf("%s: %d cuts, want %d", what, len(got.cuts), len(want.cuts))
	}
	for i := range want.cuts {
		g, w := got.cuts[i], want.cuts[i]
		if g.Seq != w.Seq || !g.Watermark.Equal(w.Watermark) || g.Nodes != w.Nodes {
			t.Fatalf("%s: cut %d is %+v, want %+v", what, i, g, w)
		}
		for x := range want.records[i] {
			if got.records[i][x] != want.records[i][x] {
				t.Fatalf("%s: cut at %d, node %d: %s, want %s", what, w.Seq, x, got.records[i][x], want.records[i][x])
			}
		}
	}
}

// TestArrivalDoesNotChangeHistory stores one log's history four ways —
// applied in one pass straight into a store (what backfill does),
// published at once to a running worker, published in three parts with
// pauses, and with the worker stopped after the first part and started
// again on its directory — and demands the same cuts, at each the same
// records and adjacency of every node, through the last cut every way
// reaches, and the same final vectors.
func TestArrivalDoesNotChangeHistory(t *testing.T) {
	c := mustCounting(t, delta.Undirected, 4)
	const win = 20 * time.Minute
	log := testLog(2400, 31)
	// The reference: one applier committing every cut to a store.
	ref, err := storage.Open(t.TempDir(), storage.Settings{Kind: c.Catalog.Kind, MaxNodes: 4, NumOrbits: c.Catalog.NumOrbits(), Window: win})
	if err != nil {
		t.Fatal(err)
	}
	defer ref.Close()
	end := applyLog(t, c, win, testCuts, log, func(cp *storage.Checkpoint) error { return ref.Commit(cp) })
	last := ref.Seq()
	want := readHistory(t, ref, last)
	final := vectorsByName(t, end)
	if len(want.cuts) < 30 {
		t.Fatalf("only %d cuts: the log does not exercise the test", len(want.cuts))
	}

	srv := startServer(t)
	_, js := connect(t, srv.URL())
	bounds := []int{0, 800, 1500, len(log)}
	for _, way := range []string{"at once", "in parts", "restarted"} {
		t.Run(way, func(t *testing.T) {
			name := map[string]string{"at once": "ONCE", "in parts": "PARTS", "restarted": "RESTART"}[way]
			subject := name + ".events"
			dir := t.TempDir()
			ws := startWorkers(t, srv.URL(), name, subject, c, win, 1, dir)
			switch way {
			case "at once":
				publishLog(t, js, name, subject, log)
			case "in parts":
				for k := range 3 {
					publishFrom(t, js, name, subject, log[:bounds[k+1]], bounds[k])
					waitApplied(t, ws, lastSeq(t, js, name))
					time.Sleep(200 * time.Millisecond)
				}
			case "restarted":
				publishFrom(t, js, name, subject, log[:bounds[1]], 0)
				waitApplied(t, ws, lastSeq(t, js, name))
				ws[0].stop(t)
				publishFrom(t, js, name, subject, log, bounds[1])
				ws = startWorkers(t, srv.URL(), name, subject, c, win, 1, dir)
			}
			waitApplied(t, ws, uint64(len(log)))
			waitCommitted(t, ws, last)
			sameVectors(t, way, readAll(t, ws, final), final)
			sameHistory(t, way, readHistory(t, ws[0].st, last), want)
			ws[0].stop(t)
		})
	}
}
