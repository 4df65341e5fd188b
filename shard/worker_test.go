package shard

import (
	"context"
	"fmt"
	"math/rand/v2"
	"path/filepath"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/nats-io/nats.go"
	"github.com/nats-io/nats.go/jetstream"

	"orbitwatch/delta"
	"orbitwatch/storage"
	"orbitwatch/stream"
)

// busMsg is one log message of a test: an event, or bytes that are not one.
type busMsg struct {
	ev  stream.Event
	raw []byte // when set, published as is (a malformed message)
}

// testLog makes a seeded log of n messages: adds among a few busy and many
// quiet accounts, removes of live edges, repeats, self-loops, removes of
// absent edges, and every 97th message malformed.
func testLog(n int, seed uint64) []busMsg {
	r := rand.New(rand.NewPCG(seed, 3))
	pick := func() string {
		if r.IntN(6) == 0 {
			return "shop-" + strconv.Itoa(r.IntN(4))
		}
		return "acct-" + strconv.Itoa(r.IntN(300))
	}
	var live [][2]string
	out := make([]busMsg, 0, n)
	ts := time.Date(2026, 2, 1, 0, 0, 0, 0, time.UTC)
	for i := 1; i <= n; i++ {
		ts = ts.Add(time.Second)
		e := stream.Event{ID: fmt.Sprintf("ev-%d-%d", seed, i), TS: ts, HasTS: true}
		switch {
		case i%97 == 0:
			out = append(out, busMsg{raw: []byte("{not an event " + strconv.Itoa(i))})
			continue
		case i%89 == 0:
			e.Src = pick()
			e.Dst = e.Src
		case i%83 == 0:
			e.Op, e.Src, e.Dst = stream.OpRemove, "acct-none", pick()
		case len(live) > 0 && r.IntN(4) == 0:
			k := r.IntN(len(live))
			e.Op, e.Src, e.Dst = stream.OpRemove, live[k][0], live[k][1]
			live[k] = live[len(live)-1]
			live = live[:len(live)-1]
		default:
			e.Src, e.Dst = pick(), pick()
			if e.Src != e.Dst {
				live = append(live, [2]string{e.Src, e.Dst})
			}
		}
		out = append(out, busMsg{ev: e})
	}
	return out
}

// reference applies the log in one applier, seqs 1, 2, … as the stream
// assigns them, and returns every node's vector by name.
func reference(t *testing.T, c *Counting, win time.Duration, log []busMsg) map[string][]uint64 {
	t.Helper()
	a := NewApplier(c, win)
	for i, m := range log {
		seq := uint64(i + 1)
		if m.raw != nil {
			a.RejectLine(seq, malformedReason)
			continue
		}
		if err := a.Apply(seq, m.ev); err != nil && !isReject(err) {
			t.Fatal(err)
		}
	}
	out := map[string][]uint64{}
	for x, name := range a.Names() {
		out[name] = append([]uint64(nil), a.Vectors().Row(uint32(x))...)
	}
	return out
}

func startServer(t *testing.T) *stream.Embedded {
	t.Helper()
	srv, err := stream.StartEmbedded(stream.EmbeddedOptions{StoreDir: t.TempDir()})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(srv.Shutdown)
	return srv
}

func connect(t *testing.T, url string) (*nats.Conn, jetstream.JetStream) {
	t.Helper()
	nc, err := nats.Connect(url)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(nc.Close)
	js, err := jetstream.New(nc)
	if err != nil {
		t.Fatal(err)
	}
	return nc, js
}

// publishLog publishes the log on subject of stream name, creating it.
func publishLog(t *testing.T, js jetstream.JetStream, name, subject string, log []busMsg) {
	t.Helper()
	ctx := context.Background()
	if _, err := stream.EnsureStream(ctx, js, name, subject, 1); err != nil {
		t.Fatal(err)
	}
	p := stream.NewPublisher(js, subject, stream.PublisherOptions{Stream: name})
	for i, m := range log {
		if m.raw != nil {
			// A raw message must land at its place in order: flush first.
			if err := p.Flush(ctx); err != nil {
				t.Fatal(err)
			}
			if _, err := js.Publish(ctx, subject, m.raw, jetstream.WithMsgID(fmt.Sprintf("raw-%d", i))); err != nil {
				t.Fatal(err)
			}
			continue
		}
		if err := p.Publish(ctx, m.ev); err != nil {
			t.Fatal(err)
		}
		if (i+1)%500 == 0 {
			if err := p.Flush(ctx); err != nil {
				t.Fatal(err)
			}
		}
	}
	if err := p.Flush(ctx); err != nil {
		t.Fatal(err)
	}
}

type runningWorker struct {
	w      *Worker
	st     *storage.Store
	cancel context.CancelFunc
	done   chan error
}

func startWorkers(t *testing.T, url, name, subject string, c0 *Counting, win time.Duration, shards int, dir string) []*runningWorker {
	return startDeployment(t, url, name, subject, "", c0, win, shards, dir)
}

// partLimit, when set, makes the tests' workers cut their shuffle
// messages into parts of this many bytes of changes.
var partLimit int

func startDeployment(t *testing.T, url, name, subject, deployment string, c0 *Counting, win time.Duration, shards int, dir string) []*runningWorker {
	t.Helper()
	var ws []*runningWorker
	for i := range shards {
		// Engines are not safe for concurrent use: one Counting each.
		c := mustCounting(t, c0.Catalog.Kind, c0.Catalog.MaxNodes)
		nc, _ := connect(t, url)
		st, err := storage.Open(filepath.Join(dir, fmt.Sprintf("shard-%d", i)), storage.Settings{Kind: c.Catalog.Kind, MaxNodes: c.Catalog.MaxNodes, NumOrbits: c.Catalog.NumOrbits(), Window: win})
		if err != nil {
			t.Fatal(err)
		}
		ws = append(ws, runWorker(t, WorkerConfig{Conn: nc, Stream: name, Subject: subject, Deployment: deployment, Shard: i, Shards: shards, Batch: 64, Counting: c, Window: win, Store: st}))
	}
	return ws
}

// runWorker makes the worker of cfg and runs it until stop.
func runWorker(t *testing.T, cfg WorkerConfig) *runningWorker {
	t.Helper()
	w, err := NewWorker(cfg)
	if err != nil {
		t.Fatal(err)
	}
	w.partLimit = partLimit
	ctx, cancel := context.WithCancel(context.Background())
	rw := &runningWorker{w: w, st: cfg.Store, cancel: cancel, done: make(chan error, 1)}
	go func() { rw.done <- w.Run(ctx) }()
	return rw
}

func (rw *runningWorker) stop(t *testing.T) {
	t.Helper()
	rw.cancel()
	if err := <-rw.done; err != nil {
		t.Fatalf("worker: %v", err)
	}
	if err := rw.st.Close(); err != nil {
		t.Fatal(err)
	}
}

// waitCut waits until every worker's cut has reached seq.
func waitCut(t *testing.T, ws []*runningWorker, seq uint64) {
	t.Helper()
	deadline := time.Now().Add(15 * time.Second)
	for _, rw := range ws {
		for rw.w.Status().CutSeq < seq {
			for _, o := range ws {
				select {
				case err := <-o.done:
					t.Fatalf("shard %d stopped: %v", o.w.cfg.Shard, err)
				default:
				}
			}
			if time.Now().After(deadline) {
				for _, o := range ws {
					t.Logf("shard %d: %+v", o.w.cfg.Shard, o.w.Status())
				}
				if s, err := o0(ws).js.Stream(context.Background(), shuffleStream(&o0(ws).cfg)); err == nil {
					info, err := s.Info(context.Background(), jetstream.WithSubjectFilter(">"))
					t.Logf("shuffle %+v %v %v", info.State.Subjects, info.State.Msgs, err)
				}
				t.Fatalf("shard %d: cut %d, want %d", rw.w.cfg.Shard, rw.w.Status().CutSeq, seq)
			}
			time.Sleep(10 * time.Millisecond)
		}
	}
}

// owned reads every node's vector from the store of the shard that owns
// it, through the worker's Read (local or forwarded over NATS).
func owned(t *testing.T, ws []*runningWorker, names map[string][]uint64) map[string][]uint64 {
	t.Helper()
	out := map[string][]uint64{}
	for name := range names {
		// Ask a worker that is not the owner when there is one, so reads
		// are forwarded.
		rw := ws[(OwnerOf(name, len(ws))+1)%len(ws)]
		ctx, cancel := context.WithTimeout(context.Background(), 5*time.Second)
		r, err := rw.w.Read(ctx, ReadRequest{Node: name})
		cancel()
		if err != nil {
			t.Fatal(err)
		}
		if r.Status != 200 || r.Shard != OwnerOf(name, len(ws)) {
			t.Fatalf("read %q: status %d from shard %d: %s", name, r.Status, r.Shard, r.Error)
		}
		out[name] = r.Orbits
	}
	return out
}

func sameVectors(t *testing.T, what string, got, want map[string][]uint64) {
	t.Helper()
	if len(got) != len(want) {
		t.Fatalf("%s: %d nodes, want %d", what, len(got), len(want))
	}
	for n, w := range want {
		g := got[n]
		if len(g) != len(w) {
			t.Fatalf("%s: node %q has %d orbits, want %d", what, n, len(g), len(w))
		}
		for o := range w {
			if g[o] != w[o] {
				t.Fatalf("%s: node %q orbit %d = %d, want %d", what, n, o, g[o], w[o])
			}
		}
	}
}

// TestWorkersMatchOneApplier runs 1 and 3 in-process workers on one
// embedded server and demands, at the final cut, every node's vector of a
// single applier over the same log, the rejects counted and kept.
func TestWorkersMatchOneApplier(t *testing.T) {
	n := 3000
	if testing.Short() {
		n = 1200
	}
	c := mustCounting(t, delta.Undirected, 4)
	log := testLog(n, 7)
	srv := startServer(t)
	_, js := connect(t, srv.URL())
	for _, tc := range []struct {
		shards int
		window time.Duration
	}{{1, 0}, {3, 0}, {2, 5 * time.Minute}} {
		shards := tc.shards
		want := reference(t, c, tc.window, log)
		t.Run(fmt.Sprintf("shards=%d,window=%v", shards, tc.window), func(t *testing.T) {
			name, subject := fmt.Sprintf("W%d", shards), fmt.Sprintf("w%d.events", shards)
			ws := startWorkers(t, srv.URL(), name, subject, c, tc.window, shards, t.TempDir())
			publishLog(t, js, name, subject, log)
			// Cut control messages may sit between the events: wait for
			// the log's last sequence, not for n.
			waitCut(t, ws, lastSeq(t, js, name))
			sameVectors(t, "workers vs one applier", owned(t, ws, want), want)

			var malformed, rejected uint64
			for _, m := range log {
				if m.raw != nil {
					malformed++
				}
			}
			st := ws[0].w.Status()
			for reason, k := range st.Rejected {
				rejected += k
				if reason == malformedReason && k != malformed {
					t.Fatalf("%d malformed counted, %d published", k, malformed)
				}
			}
			if !st.Ready || st.Applied+rejected != uint64(n) {
				t.Fatalf("status %+v: applied + rejected ≠ %d", st, n)
			}
			if tc.window > 0 && st.Expired == 0 {
				t.Fatalf("status %+v: a %v window over %d s of events expired nothing", st, tc.window, n)
			}
			// As of a time before the first event there is no cut.
			r, err := ws[0].w.Read(context.Background(), ReadRequest{Node: "acct-1", At: time.Date(2020, 1, 1, 0, 0, 0, 0, time.UTC)})
			if err != nil || r.Status != 404 {
				t.Fatalf("read before the first cut: %+v, %v", r, err)
			}
			rs, err := js.Stream(context.Background(), name+"_REJECTS")
			if err != nil {
				t.Fatal(err)
			}
			info, err := rs.Info(context.Background())
			if err != nil {
				t.Fatal(err)
			}
			if info.State.Msgs != rejected {
				t.Fatalf("rejects stream holds %d messages, %d rejected", info.State.Msgs, rejected)
			}
			for _, rw := range ws {
				rw.stop(t)
			}
		})
	}
}

// TestWorkerRefusesOtherShardCount: the shard count is fixed by the first
// worker of a deployment.
func TestWorkerRefusesOtherShardCount(t *testing.T) {
	c := mustCounting(t, delta.Undirected, 3)
	srv := startServer(t)
	ws := startWorkers(t, srv.URL(), "FIX", "fix.events", c, 0, 2, t.TempDir())
	waitCut(t, ws, 0)
	time.Sleep(200 * time.Millisecond)
	nc, _ := connect(t, srv.URL())
	st, err := storage.Open(t.TempDir(), storage.Settings{Kind: c.Catalog.Kind, MaxNodes: c.Catalog.MaxNodes, NumOrbits: c.Catalog.NumOrbits()})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	w, err := NewWorker(WorkerConfig{Conn: nc, Stream: "FIX", Subject: "fix.events", Shard: 0, Shards: 3, Batch: 64, Counting: c, Store: st})
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithTimeout(context.Background(), 10*time.Second)
	defer cancel()
	err = w.Run(ctx)
	if err == nil || !strings.Contains(err.Error(), "created for 2 shards") {
		t.Fatalf("worker with --shards 3 on a 2-shard deployment: %v", err)
	}
	var wg sync.WaitGroup
	for _, rw := range ws {
		wg.Add(1)
		go func() { defer wg.Done(); rw.cancel() }()
	}
	wg.Wait()
	for _, rw := range ws {
		rw.stop(t)
	}
}

func lastSeq(t *testing.T, js jetstream.JetStream, name string) uint64 {
	t.Helper()
	s, err := js.Stream(context.Background(), name)
	if err != nil {
		t.Fatal(err)
	}
	info, err := s.Info(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	return info.State.LastSeq
}

func o0(ws []*runningWorker) *Worker { return ws[0].w }

// TestTwoDeploymentsFollowOneLog: deployments of 1 and 2 shards under
// different names read one log side by side (the way to change the shard
// count) and both end at one applier's vectors.
func TestTwoDeploymentsFollowOneLog(t *testing.T) {
	c := mustCounting(t, delta.Undirected, 3)
	log := testLog(1000, 9)
	want := reference(t, c, 0, log)
	srv := startServer(t)
	_, js := connect(t, srv.URL())
	publishLog(t, js, "SHARED", "shared.events", log)
	one := startDeployment(t, srv.URL(), "SHARED", "shared.events", "OLD", c, 0, 1, t.TempDir())
	two := startDeployment(t, srv.URL(), "SHARED", "shared.events", "NEW", c, 0, 2, t.TempDir())
	last := lastSeq(t, js, "SHARED")
	for _, ws := range [][]*runningWorker{one, two} {
		waitCut(t, ws, last)
		sameVectors(t, fmt.Sprintf("%d-shard deployment vs one applier", len(ws)), owned(t, ws, want), want)
	}
	for _, rw := range append(one, two...) {
		rw.stop(t)
	}
}

// TestWorkersWithShuffleParts: with shuffle messages cut into parts of 200
// bytes of changes (as a big batch is cut under the server's maximum
// payload), three workers still end at one applier's vectors.
func TestWorkersWithShuffleParts(t *testing.T) {
	partLimit = 200
	t.Cleanup(func() { partLimit = 0 })
	c := mustCounting(t, delta.Undirected, 4)
	log := testLog(1500, 13)
	want := reference(t, c, 0, log)
	srv := startServer(t)
	_, js := connect(t, srv.URL())
	ws := startWorkers(t, srv.URL(), "PARTS", "parts.events", c, 0, 3, t.TempDir())
	publishLog(t, js, "PARTS", "parts.events", log)
	waitCut(t, ws, lastSeq(t, js, "PARTS"))
	sameVectors(t, "workers with shuffle parts vs one applier", owned(t, ws, want), want)
	s, err := js.Stream(context.Background(), "PARTS_SHUFFLE")
	if err != nil {
		t.Fatal(err)
	}
	info, err := s.Info(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	// Without parts there would be 3 × 3 messages per batch.
	if batches := lastSeq(t, js, "PARTS") / 64; info.State.Msgs <= 9*batches {
		t.Fatalf("%d shuffle messages for about %d batches: no message was cut into parts", info.State.Msgs, batches)
	}
	for _, rw := range ws {
		rw.stop(t)
	}
}
