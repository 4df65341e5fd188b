package shard

import (
	"context"
	"errors"
	"fmt"
	"net"
	"net/url"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/nats-io/nats-server/v2/server"
	"github.com/nats-io/nats.go"
	"github.com/nats-io/nats.go/jetstream"

	"orbitwatch/delta"
	"orbitwatch/stream"
)

// logLines collects what workers tell their Logf.
type logLines struct {
	mu    sync.Mutex
	lines []string
}

func (l *logLines) logf(format string, args ...any) {
	l.mu.Lock()
	defer l.mu.Unlock()
	l.lines = append(l.lines, fmt.Sprintf(format, args...))
}

// retries returns the start-up retry lines.
func (l *logLines) retries() []string {
	l.mu.Lock()
	defer l.mu.Unlock()
	var out []string
	for _, s := range l.lines {
		if strings.HasPrefix(s, "start-up attempt ") {
			out = append(out, s)
		}
	}
	return out
}

// reconnecting dials url with a connection that keeps trying to reconnect
// every 50 ms, and connects later when no server listens yet, the way a
// worker's connection rides out a server restart.
func reconnecting(t *testing.T, url string) *nats.Conn {
	t.Helper()
	nc, err := nats.Connect(url, nats.MaxReconnects(-1), nats.ReconnectWait(50*time.Millisecond), nats.RetryOnFailedConnect(true))
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(nc.Close)
	return nc
}

// freeAddr returns a loopback host:port that nothing listened on a moment
// ago.
func freeAddr(t *testing.T) string {
	t.Helper()
	l, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	return l.Addr().String()
}

func tcpPort(t *testing.T, addr string) int {
	t.Helper()
	a, err := net.ResolveTCPAddr("tcp", addr)
	if err != nil {
		t.Fatal(err)
	}
	return a.Port
}

func portOf(t *testing.T, u string) string {
	t.Helper()
	p, err := url.Parse(u)
	if err != nil {
		t.Fatal(err)
	}
	_, port, err := net.SplitHostPort(p.Host)
	if err != nil {
		t.Fatal(err)
	}
	return port
}

// TestWorkersStartWhileServerRestarts: the server holding half of the log
// goes down, two workers start while it is down (their first JetStream
// request times out), and it comes back on the same store directory and
// port after longer than one start-up attempt waits. The workers must
// retry, say why, come up, and end with a single applier's vectors over
// the whole log, the second half published after the restart.
func TestWorkersStartWhileServerRestarts(t *testing.T) {
	n := 1200
	if testing.Short() {
		n = 700
	}
	c := mustCounting(t, delta.Undirected, 4)
	log := testLog(n, 21)
	want := reference(t, c, 0, log)
	// Not a multiple of 97: the raw messages of the two halves get
	// distinct message ids from publishLog.
	half := n/2 + 1
	const name, subject = "RESTART", "restart.events"

	storeDir := t.TempDir()
	srv, err := stream.StartEmbedded(stream.EmbeddedOptions{StoreDir: storeDir})
	if err != nil {
		t.Fatal(err)
	}
	srvURL := srv.URL()
	pub := reconnecting(t, srvURL)
	js, err := jetstream.New(pub)
	if err != nil {
		t.Fatal(err)
	}
	publishLog(t, js, name, subject, log[:half])

	var ws []*runningWorker
	var logs logLines
	conns := make([]*nats.Conn, 2)
	for i := range conns {
		conns[i] = reconnecting(t, srvURL)
	}
	srv.Shutdown()
	dataDir := t.TempDir()
	for i, nc := range conns {
		cc := mustCounting(t, c.Catalog.Kind, c.Catalog.MaxNodes)
		ws = append(ws, runWorker(t, WorkerConfig{Conn: nc, Stream: name, Subject: subject, Shard: i, Shards: len(conns),
			Counting: cc, Store: openShardStore(t, cc, dataDir, i, 0), Logf: logs.logf}))
	}
	// Down for longer than one start-up attempt waits for an answer.
	time.Sleep(startAttempt + time.Second)
	for _, rw := range ws {
		select {
		case err := <-rw.done:
			t.Fatalf("shard %d stopped while the server was down: %v", rw.w.cfg.Shard, err)
		default:
		}
	}
	srv, err = stream.StartEmbedded(stream.EmbeddedOptions{StoreDir: storeDir, Listen: "127.0.0.1:" + portOf(t, srvURL)})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(srv.Shutdown)
	publishLog(t, js, name, subject, log[half:])
	waitApplied(t, ws, lastSeq(t, js, name))
	sameVectors(t, "workers started while the server was down vs one applier", readAll(t, ws, want), want)

	retries := logs.retries()
	if len(retries) < len(ws) {
		t.Fatalf("%d start-up retries logged for %d workers that started with the server down: %q", len(retries), len(ws), logs.lines)
	}
	for _, r := range retries {
		if !strings.Contains(r, context.DeadlineExceeded.Error()) || !strings.Contains(r, "trying again in") {
			t.Fatalf("retry line %q does not say why and when", r)
		}
	}
	for _, rw := range ws {
		if st := rw.w.Status(); !st.Ready {
			t.Fatalf("shard %d not ready after the restart: %+v", rw.w.cfg.Shard, st)
		}
		rw.stop(t)
	}
}

// TestWorkerStopsWhileWaitingForJetStream: a worker whose server never
// comes stops cleanly when its context ends in the middle of a start-up
// attempt.
func TestWorkerStopsWhileWaitingForJetStream(t *testing.T) {
	addr := freeAddr(t)
	c := mustCounting(t, delta.Undirected, 3)
	st := openShardStore(t, c, t.TempDir(), 0, 0)
	defer st.Close()
	var logs logLines
	w, err := NewWorker(WorkerConfig{Conn: reconnecting(t, "nats://"+addr), Stream: "NEVER", Subject: "never.events", Shard: 0, Shards: 1,
		Counting: c, Store: st, Logf: logs.logf})
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithTimeout(context.Background(), time.Second)
	defer cancel()
	if err := w.Run(ctx); err != nil {
		t.Fatalf("Run with no server, stopped by its context: %v", err)
	}
	if st := w.Status(); st.Ready {
		t.Fatalf("a worker that never reached JetStream says it is ready: %+v", st)
	}
}

// TestStartupFailsAtOnce: refusals that retrying cannot mend end Run with
// their message before any start-up retry: a log stream with other
// settings, and replicas a single server cannot hold.
func TestStartupFailsAtOnce(t *testing.T) {
	c := mustCounting(t, delta.Undirected, 3)
	srv := startServer(t)
	nc, js := connect(t, srv.URL())
	ctx := context.Background()
	// A log stream OTHER on a subject other than the worker's.
	if _, err := js.CreateStream(ctx, jetstream.StreamConfig{Name: "OTHER", Subjects: []string{"other.elsewhere"}}); err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		what   string
		cfg    WorkerConfig
		expect string
	}{
		{"a log stream with other settings", WorkerConfig{Stream: "OTHER", Subject: "other.events", Shard: 0, Shards: 1}, "exists with subjects [other.elsewhere]"},
		// nats-server errors.json: JSStreamReplicasNotSupportedErr, code 500,
		// err_code 10074, "replicas > 1 not supported in non-clustered mode".
		{"three replicas on one server", WorkerConfig{Stream: "SOLO", Subject: "solo.events", Shard: 0, Shards: 1, Replicas: 3}, "replicas > 1 not supported"},
	} {
		t.Run(tc.what, func(t *testing.T) {
			var logs logLines
			cfg := tc.cfg
			cfg.Conn, cfg.Counting, cfg.Logf = nc, c, logs.logf
			cfg.Store = openShardStore(t, c, t.TempDir(), cfg.Shard, 0)
			defer cfg.Store.Close()
			w, err := NewWorker(cfg)
			if err != nil {
				t.Fatal(err)
			}
			// The deadline only keeps a wrong retry loop from hanging the
			// test; a final refusal must come before any retry.
			rctx, cancel := context.WithTimeout(ctx, 30*time.Second)
			defer cancel()
			err = w.Run(rctx)
			if err == nil || !strings.Contains(err.Error(), tc.expect) {
				t.Fatalf("Run: %v; want an error saying %q", err, tc.expect)
			}
			if r := logs.retries(); len(r) > 0 {
				t.Fatalf("a refusal retrying cannot mend was retried: %q", r)
			}
		})
	}
}

// TestTransient sorts the start-up errors into those a later attempt may
// mend and those it cannot. The JetStream codes are those of nats-server's
// errors.json (v2.15).
func TestTransient(t *testing.T) {
	api := func(code, errCode int, desc string) error {
		return fmt.Errorf("log stream X: %w", &jetstream.APIError{Code: code, ErrorCode: jetstream.ErrorCode(errCode), Description: desc})
	}
	for _, tc := range []struct {
		err  error
		want bool
	}{
		{fmt.Errorf("stream: create stream X: %w", context.DeadlineExceeded), true},
		{nats.ErrTimeout, true},
		{api(503, 10008, "JetStream system temporarily unavailable"), true},
		{api(500, 10009, "JetStream cluster can not handle request"), true},
		{api(500, 10118, "stream is offline"), true},
		{api(500, 10194, "stream is offline: peers lost"), true},
		{api(503, 10004, "incomplete results"), true},
		{api(400, 10005, "no suitable peers for placement"), true},
		{api(503, 10076, "JetStream not enabled"), false},
		{api(503, 10039, "JetStream not enabled for account"), false},
		{api(500, 10074, "replicas > 1 not supported in non-clustered mode"), false},
		{api(400, 10058, "stream name already in use with a different configuration"), false},
		{jetstream.ErrStreamNameAlreadyInUse, false},
		{nats.ErrNoResponders, false},
		{nats.ErrConnectionClosed, false},
		{nats.ErrAuthorization, false},
		{nats.ErrPermissionViolation, false},
		{context.Canceled, false},
		{errors.New("stream ORBITWATCH exists with subjects [other]"), false},
	} {
		if got := transient(tc.err); got != tc.want {
			t.Errorf("transient(%v) = %v, want %v", tc.err, got, tc.want)
		}
	}
}

// startCluster starts three JetStream servers in this process, routed to
// each other on loopback ports, and returns them once one is the
// JetStream meta leader and all are current with it, with the clients'
// URL list.
func startCluster(t *testing.T) ([]*server.Server, string) {
	t.Helper()
	var clients, routes []string
	for range 3 {
		clients = append(clients, freeAddr(t))
		routes = append(routes, freeAddr(t))
	}
	var srvs []*server.Server
	for i := range 3 {
		var o server.Options
		o.ServerName, o.Host, o.Port, o.JetStream, o.StoreDir, o.NoSigs, o.NoLog = fmt.Sprintf("s%d", i), "127.0.0.1", tcpPort(t, clients[i]), true, t.TempDir(), true, true
		o.Cluster.Name, o.Cluster.Host, o.Cluster.Port = "startup", "127.0.0.1", tcpPort(t, routes[i])
		o.Routes = server.RoutesFromStr("nats://" + strings.Join(routes, ",nats://"))
		s, err := server.NewServer(&o)
		if err != nil {
			t.Fatal(err)
		}
		go s.Start()
		t.Cleanup(func() { s.Shutdown(); s.WaitForShutdown() })
		srvs = append(srvs, s)
	}
	deadline := time.Now().Add(30 * time.Second)
	for {
		leader, current := false, 0
		for _, s := range srvs {
			if s.JetStreamIsLeader() {
				leader = true
			}
			if s.JetStreamIsCurrent() {
				current++
			}
		}
		if leader && current == len(srvs) {
			return srvs, "nats://" + strings.Join(clients, ",nats://")
		}
		if time.Now().After(deadline) {
			t.Fatalf("cluster of 3: no JetStream meta leader with all servers current after 30 s")
		}
		time.Sleep(50 * time.Millisecond)
	}
}

// TestWorkersStartWhileClusterElects: a deployment's streams are R3 on a
// three-server cluster holding the whole log; the log stream's leader is
// shut down together with the JetStream meta leader (one server) and two
// workers start at once, while the survivors elect new leaders. Their
// first requests often time out meanwhile (how often depends on how fast
// the election is; the retries are logged, not counted: the restart test
// above makes them certain). The workers must come up and end with a
// single applier's vectors.
func TestWorkersStartWhileClusterElects(t *testing.T) {
	n := 1000
	if testing.Short() {
		n = 500
	}
	c := mustCounting(t, delta.Undirected, 4)
	var log []busMsg
	for _, m := range testLog(n, 23) {
		if m.raw == nil {
			log = append(log, m)
		}
	}
	want := reference(t, c, 0, log)
	const name, subject = "ELECT", "elect.events"
	srvs, urls := startCluster(t)
	nc, js := connect(t, urls)
	ctx, cancel := context.WithTimeout(context.Background(), 30*time.Second)
	defer cancel()
	// The deployment as it stood before the server was lost.
	cfg := WorkerConfig{Stream: name, Subject: subject, Deployment: name, Replicas: 3, Shards: 2, Cuts: testCuts}
	if _, err := startStreams(ctx, js, &cfg); err != nil {
		t.Fatal(err)
	}
	p := stream.NewPublisher(js, subject, stream.PublisherOptions{Stream: name})
	for _, m := range log {
		if err := p.Publish(ctx, m.ev); err != nil {
			t.Fatal(err)
		}
	}
	if err := p.Flush(ctx); err != nil {
		t.Fatal(err)
	}
	// The JetStream meta leader is made the log stream's leader too and
	// shut down: both must be elected anew before a stream request is
	// answered.
	var meta *server.Server
	for _, srv := range srvs {
		if srv.JetStreamIsLeader() {
			meta = srv
		}
	}
	if meta == nil {
		t.Fatal("no JetStream meta leader among the servers")
	}
	leadBy(t, ctx, nc, js, name, meta.Name())
	meta.Shutdown()

	var ws []*runningWorker
	var logs logLines
	dataDir := t.TempDir()
	for i := range cfg.Shards {
		cc := mustCounting(t, c.Catalog.Kind, c.Catalog.MaxNodes)
		wc := cfg
		wc.Conn, wc.Shard, wc.Counting, wc.Store, wc.Logf = reconnecting(t, urls), i, cc, openShardStore(t, cc, dataDir, i, 0), logs.logf
		ws = append(ws, runWorker(t, wc))
	}
	waitApplied(t, ws, uint64(len(log)))
	sameVectors(t, "workers started while the cluster elected a leader vs one applier", readAll(t, ws, want), want)
	t.Logf("start-up retries: %q", logs.retries())
	for _, rw := range ws {
		rw.stop(t)
	}
}

// leadBy moves the leadership of stream name to the server called want,
// by leader step-downs that name it as preferred (JetStream API
// $JS.API.STREAM.LEADER.STEPDOWN.<stream> with placement "preferred",
// served by nats-server 2.11 and later).
func leadBy(t *testing.T, ctx context.Context, nc *nats.Conn, js jetstream.JetStream, name, want string) {
	t.Helper()
	for ctx.Err() == nil {
		s, err := js.Stream(ctx, name)
		if err == nil && s.CachedInfo().Cluster != nil && s.CachedInfo().Cluster.Leader == want {
			return
		}
		if err == nil {
			nc.RequestWithContext(ctx, "$JS.API.STREAM.LEADER.STEPDOWN."+name, []byte(`{"placement":{"preferred":"`+want+`"}}`))
		}
		time.Sleep(100 * time.Millisecond)
	}
	t.Fatalf("stream %s: leadership not moved to %s: %v", name, want, ctx.Err())
}
