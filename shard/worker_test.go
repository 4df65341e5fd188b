package shard

import (
	"context"
	"fmt"
	"math/rand/v2"
	"path/filepath"
	"strconv"
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
	return vectorsByName(t, applyLog(t, c, win, Cuts{}, log, nil))
}

// applyLog applies log in one applier with cuts, handing every cut to
// onCut.
func applyLog(t *testing.T, c *Counting, win time.Duration, cuts Cuts, log []busMsg, onCut func(*storage.Checkpoint) error) *Applier {
	t.Helper()
	a := NewApplier(c, win, cuts)
	a.OnCut = onCut
	for i, m := range log {
		seq := uint64(i + 1)
		if m.raw != nil {
			if err := a.RejectLine(seq, malformedReason); err != nil {
				t.Fatal(err)
			}
			continue
		}
		if err := a.Apply(seq, m.ev); err != nil && !isReject(err) {
			t.Fatal(err)
		}
	}
	return a
}

func vectorsByName(t testing.TB, a *Applier) map[string][]uint64 {
	vec := mustVectors(t, a)
	out := map[string][]uint64{}
	for x, name := range a.Names() {
		out[name] = append([]uint64(nil), vec.Row(uint32(x))...)
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
	publishFrom(t, js, name, subject, log, 0)
}

// publishFrom publishes log[from:], raw messages under ids of their
// position in log.
func publishFrom(t *testing.T, js jetstream.JetStream, name, subject string, log []busMsg, from int) {
	t.Helper()
	ctx := context.Background()
	if _, err := stream.EnsureStream(ctx, js, name, subject, 1); err != nil {
		t.Fatal(err)
	}
	p := stream.NewPublisher(js, subject, stream.PublisherOptions{Stream: name})
	for i := from; i < len(log); i++ {
		m := log[i]
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

// testCuts are the cuts of the tests' workers: the test log has an event
// a second, so a cut every minute holds about sixty.
var testCuts = Cuts{Every: time.Minute}

func startWorkers(t *testing.T, url, name, subject string, c0 *Counting, win time.Duration, shards int, dir string) []*runningWorker {
	t.Helper()
	var ws []*runningWorker
	for i := range shards {
		c := mustCounting(t, c0.Catalog.Kind, c0.Catalog.MaxNodes)
		nc, _ := connect(t, url)
		ws = append(ws, runWorker(t, WorkerConfig{Conn: nc, Stream: name, Subject: subject, Shard: i, Shards: shards, Cuts: testCuts,
			Counting: c, Window: win, Store: openShardStore(t, c, dir, i, win)}))
	}
	return ws
}

// openShardStore opens shard i's store under dir.
func openShardStore(t *testing.T, c *Counting, dir string, i int, win time.Duration) *storage.Store {
	t.Helper()
	st, err := storage.Open(filepath.Join(dir, fmt.Sprintf("shard-%d", i)), storage.Settings{Kind: c.Catalog.Kind, MaxNodes: c.Catalog.MaxNodes, NumOrbits: c.Catalog.NumOrbits(), Window: win})
	if err != nil {
		t.Fatal(err)
	}
	return st
}

// runWorker makes the worker of cfg and runs it until stop.
func runWorker(t *testing.T, cfg WorkerConfig) *runningWorker {
	t.Helper()
	w, err := NewWorker(cfg)
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	rw := &runningWorker{w: w, st: cfg.Store, cancel: cancel, done: make(chan error, 1)}
	go func() { rw.done <- w.Run(ctx) }()
	return rw
}

// stop stops the worker and closes its store.
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

// waitFor waits until done(status) holds for every worker.
func waitFor(t *testing.T, ws []*runningWorker, what string, done func(Status) bool) {
	t.Helper()
	deadline := time.Now().Add(30 * time.Second)
	for _, rw := range ws {
		for !done(rw.w.Status()) {
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
				t.Fatalf("shard %d: %s did not happen", rw.w.cfg.Shard, what)
			}
			time.Sleep(10 * time.Millisecond)
		}
	}
}

// waitApplied waits until every worker has applied the log up to seq.
func waitApplied(t *testing.T, ws []*runningWorker, seq uint64) {
	t.Helper()
	waitFor(t, ws, fmt.Sprintf("applying up to %d", seq), func(s Status) bool { return s.AppliedSeq >= seq })
}

// waitCommitted waits until every worker has made the cut at seq durable.
func waitCommitted(t *testing.T, ws []*runningWorker, seq uint64) {
	t.Helper()
	waitFor(t, ws, fmt.Sprintf("committing the cut at %d", seq), func(s Status) bool { return s.CommittedSeq >= seq })
}

// readAll reads every node of names now, each from a worker chosen by
// rotation (every worker answers for every node).
func readAll(t *testing.T, ws []*runningWorker, names map[string][]uint64) map[string][]uint64 {
	t.Helper()
	out := map[string][]uint64{}
	i := 0
	for name := range names {
		rw := ws[i%len(ws)]
		i++
		r, err := rw.w.Read(context.Background(), ReadRequest{Node: name})
		if err != nil {
			t.Fatal(err)
		}
		if r.Status != 200 || r.Shard != rw.w.cfg.Shard {
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

// TestWorkersMatchOneApplier runs 1 and 3 in-process workers on one
// embedded server and demands every node's vector of a single applier over
// the same log from every worker, the rejects counted and kept once, and
// as-of reads at every stored cut equal to an applier over the log up to
// that cut.
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
			waitApplied(t, ws, uint64(n))
			sameVectors(t, "workers vs one applier", readAll(t, ws, want), want)

			var malformed, rejected uint64
			for _, m := range log {
				if m.raw != nil {
					malformed++
				}
			}
			// The counts are those of the last applied event; the store
			// holds the cuts up to the one before the last event's minute.
			var cuts []uint64
			applyLog(t, c, tc.window, testCuts, log, func(cp *storage.Checkpoint) error { cuts = append(cuts, cp.Seq); return nil })
			lastCut := cuts[len(cuts)-1]
			waitCommitted(t, ws, lastCut)
			st := ws[0].w.Status()
			for reason, k := range st.Rejected {
				rejected += k
				if reason == malformedReason && k > malformed {
					t.Fatalf("%d malformed counted, %d published", k, malformed)
				}
			}
			if !st.Ready || st.Applied+rejected != uint64(n) || st.CommittedSeq < lastCut {
				t.Fatalf("status %+v: applied + rejected ≠ %d, or the cut at %d not durable", st, n, lastCut)
			}
			if tc.window > 0 && st.Expired == 0 {
				t.Fatalf("status %+v: a %v window over %d s of events expired nothing", st, tc.window, n)
			}
			// As of a time before the first event there is no cut.
			r, err := ws[0].w.Read(context.Background(), ReadRequest{Node: "acct-1", At: time.Date(2020, 1, 1, 0, 0, 0, 0, time.UTC)})
			if err != nil || r.Status != 404 {
				t.Fatalf("read before the first cut: %+v, %v", r, err)
			}
			checkAsOf(t, ws, c, tc.window, log, cuts)
			waitFor(t, ws, "all rejects republished", func(Status) bool {
				rs, err := js.Stream(context.Background(), name+"_REJECTS")
				if err != nil {
					return false
				}
				info, err := rs.Info(context.Background())
				return err == nil && info.State.Msgs >= 1
			})
			for _, rw := range ws {
				rw.stop(t)
			}
		})
	}
}

// checkAsOf reads, at a few stored cuts, every node of an applier over
// the log up to the cut, as of the cut (by seq, from the workers'
// stores), and demands that applier's vectors.
func checkAsOf(t *testing.T, ws []*runningWorker, c *Counting, win time.Duration, log []busMsg, cuts []uint64) {
	t.Helper()
	for _, i := range []int{0, len(cuts) / 3, len(cuts) - 1} {
		at := cuts[i]
		want := vectorsByName(t, applyLog(t, c, win, Cuts{}, log[:at], nil))
		for k, rw := range ws {
			n := 0
			for name, vec := range want {
				if n++; n%(len(ws)) != k {
					continue
				}
				r, err := rw.w.Read(context.Background(), ReadRequest{Node: name, Seq: at})
				if err != nil || r.Status != 200 || r.Seq != at {
					t.Fatalf("as of cut %d, node %q from shard %d: %+v %v", at, name, k, r, err)
				}
				if fmt.Sprint(r.Orbits) != fmt.Sprint(vec) {
					t.Fatalf("as of cut %d, node %q: %v, an applier over the log prefix has %v", at, name, r.Orbits, vec)
				}
			}
		}
	}
}
