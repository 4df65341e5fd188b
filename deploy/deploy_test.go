package deploy

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"net"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"

	"github.com/nats-io/nats.go"
	"github.com/nats-io/nats.go/jetstream"

	"orbitwatch/shard"
	"orbitwatch/stream"
)

// The stream the cluster test creates; the worker part passes the same
// names to the worker.
const (
	testStream  = "ORBITWATCH"
	testSubject = "orbitwatch.events"
)

var (
	buildMu  sync.Mutex
	builtBin = map[string]string{}
)

// buildBinary builds the main package pkg once per test run into a
// temporary directory and returns its path. pkg is a module path or a path
// relative to the module root.
func buildBinary(t *testing.T, pkg, name string) string {
	t.Helper()
	buildMu.Lock()
	defer buildMu.Unlock()
	if p, ok := builtBin[pkg]; ok {
		return p
	}
	dir, err := os.MkdirTemp("", "orbitwatch-deploy-bin-")
	if err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(dir, name)
	cmd := exec.Command("go", "build", "-o", out, pkg)
	cmd.Dir = ".."
	if b, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("go build %s: %v\n%s", pkg, err, b)
	}
	builtBin[pkg] = out
	return out
}

// natsServer builds nats-server from the module version go.mod pins: the
// same program the systemd unit runs.
func natsServer(t *testing.T) string {
	return buildBinary(t, "github.com/nats-io/nats-server/v2", "nats-server")
}

// freePorts returns n distinct loopback ports that were free a moment ago.
func freePorts(t *testing.T, n int) []int {
	t.Helper()
	var ls []net.Listener
	defer func() {
		for _, l := range ls {
			l.Close()
		}
	}()
	ports := make([]int, n)
	for i := range ports {
		l, err := net.Listen("tcp", "127.0.0.1:0")
		if err != nil {
			t.Fatal(err)
		}
		ls = append(ls, l)
		ports[i] = l.Addr().(*net.TCPAddr).Port
	}
	return ports
}

// clusterPorts are the loopback ports the three configuration files use:
// client, monitoring (http) and cluster route port of servers 1–3.
var clusterPorts = [3][3]int{{4222, 8222, 6222}, {4223, 8223, 6223}, {4224, 8224, 6224}}

var (
	loopbackPort = regexp.MustCompile(`127\.0\.0\.1:(\d+)\b`)
	storeDirLine = regexp.MustCompile(`(?m)^(\s*store_dir:\s*)"[^"]*"`)
)

// rewriteConfig returns the text of a configuration file with every
// loopback port of clusterPorts replaced by its counterpart in ports and
// the store_dir set to dir. A loopback port the map does not know, or a
// file without a store_dir, fails the test: the files and this test must
// change together.
func rewriteConfig(t *testing.T, text string, ports map[int]int, dir string) string {
	t.Helper()
	var bad []string
	out := loopbackPort.ReplaceAllStringFunc(text, func(m string) string {
		p, _ := strconv.Atoi(m[len("127.0.0.1:"):])
		q, ok := ports[p]
		if !ok {
			bad = append(bad, m)
			return m
		}
		return "127.0.0.1:" + strconv.Itoa(q)
	})
	if len(bad) > 0 {
		t.Fatalf("configuration uses loopback addresses the test does not map: %v", bad)
	}
	if n := len(storeDirLine.FindAllString(out, -1)); n != 1 {
		t.Fatalf("configuration has %d store_dir lines, want 1", n)
	}
	return storeDirLine.ReplaceAllString(out, `${1}"`+dir+`"`)
}

// cluster is three nats-server child processes run from deploy/nats.
type cluster struct {
	t       *testing.T
	bin     string
	dir     string
	confs   [3]string
	clients [3]string // client URLs
	procs   [3]*exec.Cmd
	exited  [3]chan struct{}
	logs    [3]*lockedBuffer
}

// startCluster writes the three configuration files with random ports and
// temporary stores and starts a server on each.
func startCluster(t *testing.T) *cluster {
	t.Helper()
	c := &cluster{t: t, bin: natsServer(t), dir: t.TempDir()}
	free := freePorts(t, 9)
	ports := map[int]int{}
	for i, row := range clusterPorts {
		for j, p := range row {
			ports[p] = free[3*i+j]
		}
	}
	for i := range 3 {
		text, err := os.ReadFile(filepath.Join("nats", fmt.Sprintf("nats-%d.conf", i+1)))
		if err != nil {
			t.Fatal(err)
		}
		store := filepath.Join(c.dir, fmt.Sprintf("store-%d", i+1))
		c.confs[i] = filepath.Join(c.dir, fmt.Sprintf("nats-%d.conf", i+1))
		if err := os.WriteFile(c.confs[i], []byte(rewriteConfig(t, string(text), ports, store)), 0o644); err != nil {
			t.Fatal(err)
		}
		c.clients[i] = fmt.Sprintf("nats://127.0.0.1:%d", ports[clusterPorts[i][0]])
	}
	for i := range 3 {
		c.start(i)
	}
	t.Cleanup(func() {
		for i := range 3 {
			c.kill(i)
		}
		if t.Failed() {
			for i, l := range c.logs {
				if l == nil {
					continue
				}
				l.mu.Lock()
				text := l.String()
				l.mu.Unlock()
				t.Logf("server %d log (tail):\n%s", i+1, tail(text, 40))
				if dump := os.Getenv("ORBITWATCH_DEPLOY_DUMP"); dump != "" {
					os.WriteFile(filepath.Join(dump, fmt.Sprintf("nats-%d.log", i+1)), []byte(text), 0o644)
				}
			}
		}
	})
	return c
}

func tail(s string, n int) string {
	lines := strings.Split(strings.TrimRight(s, "\n"), "\n")
	return strings.Join(lines[max(0, len(lines)-n):], "\n")
}

// lockedBuffer is a bytes.Buffer safe for the child's writes and the
// test's reads.
type lockedBuffer struct {
	mu sync.Mutex
	bytes.Buffer
}

func (b *lockedBuffer) Write(p []byte) (int, error) {
	b.mu.Lock()
	defer b.mu.Unlock()
	return b.Buffer.Write(p)
}

func (c *cluster) start(i int) {
	c.t.Helper()
	cmd := exec.Command(c.bin, "-c", c.confs[i])
	log := &lockedBuffer{}
	cmd.Stdout, cmd.Stderr = log, log
	if err := cmd.Start(); err != nil {
		c.t.Fatalf("starting server %d: %v", i+1, err)
	}
	done := make(chan struct{})
	c.procs[i], c.exited[i], c.logs[i] = cmd, done, log
	go func() {
		cmd.Wait()
		close(done)
	}()
}

// kill SIGKILLs server i (no lame duck, no flush) and waits for it to go.
func (c *cluster) kill(i int) {
	p := c.procs[i]
	if p == nil {
		return
	}
	c.procs[i] = nil
	p.Process.Signal(syscall.SIGKILL)
	<-c.exited[i]
}

// connect returns a client that knows all three servers and keeps
// reconnecting, and its JetStream context.
func (c *cluster) connect() (*nats.Conn, jetstream.JetStream) {
	c.t.Helper()
	var nc *nats.Conn
	var err error
	deadline := time.Now().Add(20 * time.Second)
	for {
		nc, err = nats.Connect(strings.Join(c.clients[:], ","), nats.MaxReconnects(-1), nats.ReconnectWait(100*time.Millisecond), nats.Timeout(2*time.Second))
		if err == nil || time.Now().After(deadline) {
			break
		}
		time.Sleep(100 * time.Millisecond)
	}
	if err != nil {
		c.t.Fatalf("connecting to the cluster: %v", err)
	}
	c.t.Cleanup(nc.Close)
	js, err := jetstream.New(nc)
	if err != nil {
		c.t.Fatal(err)
	}
	return nc, js
}

// ensureR3 creates the test's R3 stream, retrying while the cluster elects
// its JetStream meta leader.
func ensureR3(t *testing.T, js jetstream.JetStream) jetstream.Stream {
	t.Helper()
	ctx, cancel := context.WithTimeout(context.Background(), 60*time.Second)
	defer cancel()
	for {
		actx, acancel := context.WithTimeout(ctx, 5*time.Second)
		s, err := stream.EnsureStream(actx, js, testStream, testSubject, 3)
		acancel()
		if err == nil {
			return s
		}
		if ctx.Err() != nil {
			t.Fatalf("creating the R3 stream: %v", err)
		}
		time.Sleep(250 * time.Millisecond)
	}
}

// paymentEvents is a fictional payments log: n payments among 300 accounts
// and 30 shops, with refunds of earlier payments, each with its own id and
// a time one second after the last.
func paymentEvents(n int) []stream.Event {
	t0 := time.Date(2026, 5, 4, 8, 0, 0, 0, time.UTC)
	var out []stream.Event
	var paid [][2]string
	x := uint64(88172645463325252)
	next := func() uint64 { // xorshift64: a fixed, dependency-free sequence
		x ^= x << 13
		x ^= x >> 7
		x ^= x << 17
		return x
	}
	for len(out) < n {
		k := len(out)
		e := stream.Event{ID: fmt.Sprintf("pay-%06d", k), TS: t0.Add(time.Duration(k) * time.Second), HasTS: true}
		if len(paid) > 10 && next()%6 == 0 {
			j := int(next() % uint64(len(paid)))
			e.Op, e.Src, e.Dst = stream.OpRemove, paid[j][0], paid[j][1]
			paid[j] = paid[len(paid)-1]
			paid = paid[:len(paid)-1]
		} else {
			e.Src = fmt.Sprintf("acct-%03d", next()%300)
			if next()%4 == 0 {
				e.Dst = fmt.Sprintf("acct-%03d", next()%300)
			} else {
				e.Dst = fmt.Sprintf("shop-%02d", next()%30)
			}
			if e.Src == e.Dst {
				continue
			}
			paid = append(paid, [2]string{e.Src, e.Dst})
		}
		out = append(out, e)
	}
	return out
}

// publishAll publishes events in chunks, republishing a whole chunk when
// any of its acks fails (the server drops the ones it already stored, by
// id). before is called ahead of the first attempt to publish events[i],
// while up to 64 earlier ones may await their acks.
func publishAll(t *testing.T, js jetstream.JetStream, events []stream.Event, chunk int, before func(i int)) (stored, dups int) {
	t.Helper()
	for k := 0; k*chunk < len(events); k++ {
		part := events[k*chunk : min(len(events), (k+1)*chunk)]
		for attempt := 0; ; attempt++ {
			pub := stream.NewPublisher(js, testSubject, stream.PublisherOptions{Stream: testStream, MaxPending: 64})
			ctx, cancel := context.WithTimeout(context.Background(), 10*time.Second)
			var err error
			for j, e := range part {
				if attempt == 0 {
					before(k*chunk + j)
				}
				if err = pub.Publish(ctx, e); err != nil {
					break
				}
			}
			err = errors.Join(err, pub.Flush(ctx))
			cancel()
			stored += pub.Stats().Stored
			dups += pub.Stats().Duplicates
			if err == nil {
				break
			}
			if attempt == 60 {
				t.Fatalf("chunk %d still failing after %d attempts: %v", k, attempt, err)
			}
			t.Logf("chunk %d attempt %d: %v", k, attempt, firstLine(err.Error()))
			time.Sleep(250 * time.Millisecond)
		}
	}
	return stored, dups
}

func firstLine(s string) string {
	if i := strings.IndexByte(s, '\n'); i >= 0 {
		return s[:i] + " …"
	}
	return s
}

// pollInfo asks for the stream's info until done accepts it, for up to
// limit; a cluster electing a leader may not answer for a while. It fails
// the test with what describes the last answer.
func pollInfo(t *testing.T, js jetstream.JetStream, limit time.Duration, done func(*jetstream.StreamInfo) bool, what func(*jetstream.StreamInfo) string) *jetstream.StreamInfo {
	t.Helper()
	deadline := time.Now().Add(limit)
	for {
		ctx, cancel := context.WithTimeout(context.Background(), 5*time.Second)
		var info *jetstream.StreamInfo
		s, err := js.Stream(ctx, testStream)
		if err == nil {
			info, err = s.Info(ctx)
		}
		cancel()
		if err == nil && done(info) {
			return info
		}
		if time.Now().After(deadline) {
			last := fmt.Sprint(err)
			if err == nil {
				last = what(info)
			}
			t.Fatalf("stream info after %v: %s", limit, last)
		}
		time.Sleep(100 * time.Millisecond)
	}
}

// leaderIndex returns which of the three servers leads the stream,
// waiting for up to 30 s while it has none.
func leaderIndex(t *testing.T, js jetstream.JetStream) int {
	t.Helper()
	info := pollInfo(t, js, 30*time.Second,
		func(i *jetstream.StreamInfo) bool { return i.Cluster != nil && i.Cluster.Leader != "" },
		func(i *jetstream.StreamInfo) string { return fmt.Sprintf("no leader (cluster %+v)", i.Cluster) })
	for i := range 3 {
		if info.Cluster.Leader == fmt.Sprintf("orbitwatch-nats-%d", i+1) {
			return i
		}
	}
	t.Fatalf("stream leader %q is none of orbitwatch-nats-1..3", info.Cluster.Leader)
	return -1
}

// readLog reads the stream in order up to sequence last and returns its
// events; the workers' cut control messages (shard.ControlHeader) are
// counted apart. Any other message that does not decode fails the test.
func readLog(t *testing.T, js jetstream.JetStream, last uint64) (events []stream.Event, controls int) {
	t.Helper()
	ctx, cancel := context.WithTimeout(context.Background(), 60*time.Second)
	defer cancel()
	oc, err := js.OrderedConsumer(ctx, testStream, jetstream.OrderedConsumerConfig{DeliverPolicy: jetstream.DeliverAllPolicy})
	if err != nil {
		t.Fatal(err)
	}
	it, err := oc.Messages()
	if err != nil {
		t.Fatal(err)
	}
	defer it.Stop()
	for seq := uint64(1); seq <= last; seq++ {
		m, err := it.Next()
		if err != nil {
			t.Fatalf("reading the stream at %d: %v", seq, err)
		}
		md, err := m.Metadata()
		if err != nil {
			t.Fatal(err)
		}
		if md.Sequence.Stream != seq {
			t.Fatalf("stream sequence %d where %d was due: a gap", md.Sequence.Stream, seq)
		}
		if m.Headers().Get(shard.ControlHeader) != "" {
			controls++
			continue
		}
		e, err := stream.DecodeMessage(m.Data())
		if err != nil {
			t.Fatalf("stream seq %d: %v", seq, err)
		}
		if e.ID == "" {
			e.ID = m.Headers().Get(nats.MsgIdHdr)
		}
		events = append(events, e)
	}
	return events, controls
}

// streamLast returns the stream's last sequence.
func streamLast(t *testing.T, js jetstream.JetStream) uint64 {
	t.Helper()
	info := pollInfo(t, js, 30*time.Second, func(*jetstream.StreamInfo) bool { return true }, nil)
	return info.State.LastSeq
}

// checkExactlyOnce checks that got holds every published event once, with
// its content, and nothing else.
func checkExactlyOnce(t *testing.T, published, got []stream.Event) {
	t.Helper()
	want := make(map[string]stream.Event, len(published))
	for _, e := range published {
		want[e.ID] = e
	}
	seen := make(map[string]bool, len(got))
	for i, e := range got {
		if seen[e.ID] {
			t.Fatalf("stream seq %d: event %s stored twice", i+1, e.ID)
		}
		seen[e.ID] = true
		w, ok := want[e.ID]
		if !ok {
			t.Fatalf("stream seq %d: event %s was never published", i+1, e.ID)
		}
		if e.Op != w.Op || e.Src != w.Src || e.Dst != w.Dst || !e.TS.Equal(w.TS) || e.HasTS != w.HasTS {
			t.Fatalf("stream seq %d: event %s is %+v, published %+v", i+1, e.ID, e, w)
		}
	}
	if len(seen) != len(want) {
		t.Fatalf("stream holds %d distinct events, %d were published", len(seen), len(want))
	}
}

// waitReplicasCurrent waits until the stream ends at lastSeq and both
// replicas besides the leader are current with no lag.
func waitReplicasCurrent(t *testing.T, js jetstream.JetStream, lastSeq uint64) {
	t.Helper()
	pollInfo(t, js, 60*time.Second, func(info *jetstream.StreamInfo) bool {
		ok := info.Cluster != nil && info.State.LastSeq == lastSeq && info.Cluster.Leader != "" && len(info.Cluster.Replicas) == 2
		for _, r := range info.Cluster.Replicas {
			ok = ok && r.Current && !r.Offline && r.Lag == 0
		}
		return ok
	}, func(info *jetstream.StreamInfo) string {
		return fmt.Sprintf("replicas not current: last seq %d, cluster %+v", info.State.LastSeq, info.Cluster)
	})
}

// publishKillingLeader publishes events, SIGKILLs the stream's leader
// half-way through (with acks outstanding; settle is called first), then
// republishes the first fifth under the same ids, which must all be
// dropped as duplicates. It returns the killed server.
func publishKillingLeader(t *testing.T, c *cluster, js jetstream.JetStream, events []stream.Event, settle func()) int {
	t.Helper()
	n := len(events)
	killed := -1
	stored, dups := publishAll(t, js, events, 100, func(i int) {
		if i == n/2+37 {
			settle()
			killed = leaderIndex(t, js)
			t.Logf("SIGKILL server %d (stream leader) before event %d", killed+1, i)
			c.kill(killed)
		}
	})
	if killed < 0 {
		t.Fatal("no server was killed")
	}
	// An event stored by the dying leader may have lost its ack; its resend
	// is then acknowledged as a duplicate. So new acks are at most n, and
	// the stream's content is the proof of exactly once.
	t.Logf("acknowledged as new %d, as duplicates %d", stored, dups)
	if stored > n {
		t.Errorf("the server acknowledged %d events as new, more than the %d published", stored, n)
	}
	// The duplicate window survives the leader's death: a republish of
	// events acknowledged before it stores nothing.
	again, dupsAgain := publishAll(t, js, events[:n/5], 100, func(int) {})
	if again != 0 || dupsAgain != n/5 {
		t.Errorf("republishing %d events stored %d and dropped %d as duplicates, want 0 and %d", n/5, again, dupsAgain, n/5)
	}
	return killed
}

func clusterEvents() []stream.Event {
	if testing.Short() {
		return paymentEvents(1200)
	}
	return paymentEvents(3000)
}

// TestClusterKillOneServer runs the three-server cluster of deploy/nats,
// creates an R3 stream, SIGKILLs the stream's leader half-way through
// publishing, and checks that the stream holds every event exactly once;
// the killed server, restarted on its store, catches up.
func TestClusterKillOneServer(t *testing.T) {
	c := startCluster(t)
	_, js := c.connect()
	ensureR3(t, js)
	events := clusterEvents()
	killed := publishKillingLeader(t, c, js, events, func() {})
	last := streamLast(t, js)
	got, controls := readLog(t, js, last)
	if controls != 0 || last != uint64(len(events)) {
		t.Errorf("stream ends at %d with %d control messages, want %d events and none", last, controls, len(events))
	}
	checkExactlyOnce(t, events, got)

	c.start(killed)
	waitReplicasCurrent(t, js, last)
}

// TestClusterWorkersAcrossServerKill starts two orbitwatch workers (shards
// 0 and 1) against the three-server cluster and an R3 stream, SIGKILLs the
// stream's leader while they follow the log, and demands that both end
// with exactly the vectors of `orbitwatch replay` over the stream's events.
func TestClusterWorkersAcrossServerKill(t *testing.T) {
	c := startCluster(t)
	_, js := c.connect()
	ensureR3(t, js)
	// Workers start against a settled cluster (as systemd or Kubernetes
	// would start them after the servers): the stream has its leader.
	leaderIndex(t, js)
	workers := startWorkers(t, c, 2)
	events := clusterEvents()
	n := len(events)
	publishKillingLeader(t, c, js, events, func() {
		// The workers are past start-up and following the log.
		waitAppliedFrom(t, workers, uint64(n/2-256), false)
	})

	// Workers write nothing into the log: its end is the last event.
	last := streamLast(t, js)
	waitApplied(t, workers, last)
	got, controls := readLog(t, js, last)
	if controls != 0 {
		t.Errorf("the stream holds %d control messages: workers must not write into the log", controls)
	}
	checkExactlyOnce(t, events, got)

	// The log is the truth: replay the events in the stream's own order.
	log := filepath.Join(t.TempDir(), "log.csv")
	writeLog(t, log, got)
	checkAgainstReplay(t, workers, replayMatrix(t, log), last)
}
