package api

import (
	"context"
	"encoding/json"
	"fmt"
	"net/http"
	"path/filepath"
	"slices"
	"testing"
	"time"

	"github.com/nats-io/nats.go"
	"github.com/nats-io/nats.go/jetstream"

	"orbitwatch/shard"
	"orbitwatch/storage"
	"orbitwatch/stream"
)

// publishLog starts an embedded NATS server (its store under dir) that
// admits the holder of its nkey only, creates the stream name on subject
// and publishes events there as pay-1, pay-2, …; it returns a connection
// that the test's end closes, with the server.
func publishLog(t *testing.T, ctx context.Context, dir, name, subject string, events []stream.Event) *nats.Conn {
	t.Helper()
	srv, err := stream.StartEmbedded(stream.EmbeddedOptions{StoreDir: filepath.Join(dir, "nats"), NKeyFile: filepath.Join(dir, "nats-user.nk")})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(srv.Shutdown)
	nc, err := nats.Connect(srv.URL(), srv.ClientOptions()...)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(nc.Close)
	js, _ := jetstream.New(nc)
	if _, err := stream.EnsureStream(ctx, js, name, subject, 1); err != nil {
		t.Fatal(err)
	}
	pub := stream.NewPublisher(js, subject, stream.PublisherOptions{Stream: name})
	for i, e := range events {
		e.ID, e.Line = fmt.Sprintf("pay-%d", i+1), i+1
		if err := pub.Publish(ctx, e); err != nil {
			t.Fatal(err)
		}
	}
	if err := pub.Flush(ctx); err != nil {
		t.Fatal(err)
	}
	return nc
}

// TestAPIOverWorker serves the API of a real worker that follows a real
// JetStream log (an embedded server that admits the holder of its nkey
// only) into a real Badger store, behind a tokens file, over real HTTP:
// every node now, every node as of every committed cut, neighbourhoods,
// histories, status, readiness and metrics, against a separate applier
// over the same events with the same cuts (its vectors recounted
// statically at each cut).
func TestAPIOverWorker(t *testing.T) {
	ctx, cancel := context.WithTimeout(context.Background(), 2*time.Minute)
	defer cancel()
	dir := t.TempDir()
	const name, subject = "APILOG", "apilog.events"
	events := paymentsLog(5, 800)
	nc := publishLog(t, ctx, dir, name, subject, events)

	// The reference: one applier, the same cuts (a function of the log).
	cuts := shard.Cuts{Every: 2 * time.Hour} // an event a minute: a cut about every 120
	ref := undirected4(t)
	a := shard.NewApplier(ref, 0, cuts)
	var snaps []snapshot
	a.OnCut = func(cp *storage.Checkpoint) error {
		s := takeSnapshot(t, a, ref)
		s.seq, s.watermark = cp.Seq, cp.Watermark
		snaps = append(snaps, s)
		return nil
	}
	for i, e := range events {
		if err := a.Apply(uint64(i+1), e); err != nil {
			t.Fatal(err)
		}
	}
	final := takeSnapshot(t, a, ref)
	if len(snaps) < 4 {
		t.Fatalf("%d cuts in the reference, want several", len(snaps))
	}

	c := undirected4(t)
	st := openStore(t, c, filepath.Join(dir, "state"))
	w, err := shard.NewWorker(shard.WorkerConfig{Conn: nc, Stream: name, Subject: subject, Shard: 0, Shards: 2, Counting: c, Cuts: cuts, Store: st})
	if err != nil {
		t.Fatal(err)
	}
	h := New(w, Options{Version: "test"}) // before Run: the metrics see every cut
	wctx, wstop := context.WithCancel(ctx)
	done := make(chan error, 1)
	go func() { done <- w.Run(wctx) }()
	defer func() {
		wstop()
		if err := <-done; err != nil {
			t.Errorf("worker: %v", err)
		}
	}()
	lastCut := snaps[len(snaps)-1].seq
	for s := w.Status(); s.AppliedSeq < 800 || s.CommittedSeq < lastCut; s = w.Status() {
		select {
		case err := <-done:
			t.Fatalf("worker stopped: %v", err)
		case <-ctx.Done():
			t.Fatalf("worker at %+v", s)
		case <-time.After(10 * time.Millisecond):
		}
	}

	s := serve(t, ServerConfig{Addr: "127.0.0.1:0", TokensFile: tokensFile(t)}, h)
	client, base := http.DefaultClient, s.URL()
	getJSON := func(path string, v any) int {
		t.Helper()
		code, body := do(t, client, base, call{path: path, token: readToken})
		if code == http.StatusOK {
			if err := json.Unmarshal([]byte(body), v); err != nil {
				t.Fatalf("GET %s: %v: %s", path, err, body)
			}
		}
		return code
	}

	for node, want := range final.vectors {
		var nv NodeVector
		if code := getJSON(nodePath(node), &nv); code != 200 || nv.Seq != 800 || !slices.Equal(nv.Orbits, want) {
			t.Fatalf("%s now: %d %+v, want seq 800 %v (recount)", node, code, nv, want)
		}
	}
	for _, sn := range snaps {
		for node, want := range sn.vectors {
			var nv NodeVector
			if code := getJSON(nodePath(node)+"?seq="+fmt.Sprint(sn.seq), &nv); code != 200 || nv.Seq != sn.seq || !slices.Equal(nv.Orbits, want) {
				t.Fatalf("%s as of %d: %d %+v, want %v (recount)", node, sn.seq, code, nv, want)
			}
		}
	}

	// Neighbourhoods: the graph's own adjacency, busiest first.
	g := a.Graph()
	checked := 0
	for node := range final.vectors {
		x, _ := a.Lookup(node)
		var nb shard.Neighbors
		if code := getJSON(nodePath(node)+"/neighbors?limit=200", &nb); code != 200 {
			t.Fatalf("neighbours of %s: %d", node, code)
		}
		if nb.Degree != g.Degree(x) || len(nb.Neighbors) != g.Degree(x) || nb.Seq != 800 {
			t.Fatalf("neighbours of %s: degree %d, %d listed, seq %d; want %d", node, nb.Degree, len(nb.Neighbors), nb.Seq, g.Degree(x))
		}
		ids := make([]uint32, len(nb.Neighbors))
		for i, n := range nb.Neighbors {
			y, ok := a.Lookup(n)
			if !ok || !g.Adjacent(x, y) {
				t.Fatalf("%s lists %s, not a neighbour", node, n)
			}
			if i > 0 && g.Degree(y) > g.Degree(ids[i-1]) {
				t.Fatalf("%s: neighbours not busiest first", node)
			}
			ids[i] = y
		}
		edges := 0
		for i := range ids {
			for j := i + 1; j < len(ids); j++ {
				if g.Adjacent(ids[i], ids[j]) {
					edges++
				}
			}
		}
		if edges != len(nb.Edges) {
			t.Fatalf("%s: %d edges among its neighbours listed, the graph has %d", node, len(nb.Edges), edges)
		}
		for _, e := range nb.Edges {
			if !g.Adjacent(ids[e[0]], ids[e[1]]) {
				t.Fatalf("%s: edge %v is not in the graph", node, e)
			}
		}
		if checked++; checked == 10 {
			break
		}
	}
	if code, body := do(t, client, base, call{path: nodePath("nobody") + "/neighbors", token: readToken}); code != 404 {
		t.Errorf("neighbours of an unknown node: %d %s", code, body)
	}

	// A history: every version is a committed cut, with the recount there.
	for node := range final.vectors {
		var h historyJSON
		if code := getJSON(nodePath(node)+"/history", &h); code != 200 || len(h.Versions) == 0 {
			t.Fatalf("history of %s: %d %+v", node, code, h)
		}
		for _, v := range h.Versions {
			i := slices.IndexFunc(snaps, func(s snapshot) bool { return s.seq == v.Seq })
			if i < 0 || !slices.Equal(v.Orbits, snaps[i].vectors[node]) {
				t.Fatalf("history of %s: version %d %v is not a cut's recount", node, v.Seq, v.Orbits)
			}
		}
		break
	}

	var stj statusJSON
	if code := getJSON("/v1/status", &stj); code != 200 || len(stj.Shards) != 1 {
		t.Fatalf("status: %d %+v", code, stj)
	}
	if wj := stj.Shards[0]; wj.Shard != 0 || wj.ShardCount != 2 || wj.AppliedSeq != 800 || wj.CommittedSeq != lastCut || !wj.Ready || wj.Applied != 800 || stj.Version != "test" {
		t.Errorf("status: %+v", stj)
	}
	if code, _ := do(t, client, base, call{path: "/readyz"}); code != 200 {
		t.Errorf("readyz %d", code)
	}
	code, text := do(t, client, base, call{path: "/metrics", token: readToken})
	fams, _ := parseExposition(t, text)
	if code != 200 || fams["orbitwatch_checkpoints_total"].samples[0].value == 0 || fams["orbitwatch_events_applied_total"].samples[0].value != 800 {
		t.Errorf("metrics %d: checkpoints %v applied %v", code, fams["orbitwatch_checkpoints_total"].samples, fams["orbitwatch_events_applied_total"].samples)
	}
	if _, _, _, n := checkHistogram(t, "orbitwatch_cut_seconds", fams["orbitwatch_cut_seconds"]); n == 0 {
		t.Errorf("no cut timings observed")
	}
}
