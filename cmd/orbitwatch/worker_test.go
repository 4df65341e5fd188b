package main

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math/rand/v2"
	"net"
	"net/http"
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

	"orbitwatch/delta"
	"orbitwatch/shard"
	"orbitwatch/storage"
	"orbitwatch/stream"
)

// child is a running orbitwatch process whose output is kept.
type child struct {
	cmd  *exec.Cmd
	mu   sync.Mutex
	out  bytes.Buffer
	done chan struct{}
	err  error
}

func (c *child) Write(p []byte) (int, error) {
	c.mu.Lock()
	defer c.mu.Unlock()
	return c.out.Write(p)
}

func (c *child) output() string {
	c.mu.Lock()
	defer c.mu.Unlock()
	return c.out.String()
}

// startChild starts orbitwatch with args; it is killed at the end of the
// test if still running.
func startChild(t *testing.T, args ...string) *child {
	t.Helper()
	c := &child{cmd: exec.Command(binaryPath(t), args...), done: make(chan struct{})}
	c.cmd.Stdout, c.cmd.Stderr = c, c
	if err := c.cmd.Start(); err != nil {
		t.Fatal(err)
	}
	go func() { c.err = c.cmd.Wait(); close(c.done) }()
	t.Cleanup(func() {
		select {
		case <-c.done:
		default:
			c.cmd.Process.Kill()
			<-c.done
		}
	})
	return c
}

// waitFor waits for a line of output containing marker and returns what
// follows the marker on it.
func (c *child) waitFor(t *testing.T, marker string) string {
	t.Helper()
	deadline := time.Now().Add(30 * time.Second)
	for time.Now().Before(deadline) {
		for _, l := range strings.Split(c.output(), "\n") {
			if i := strings.Index(l, marker); i >= 0 {
				return strings.TrimSpace(l[i+len(marker):])
			}
		}
		select {
		case <-c.done:
			t.Fatalf("%v exited (%v) before printing %q:\n%s", c.cmd.Args[1:], c.err, marker, c.output())
		case <-time.After(20 * time.Millisecond):
		}
	}
	t.Fatalf("%v did not print %q:\n%s", c.cmd.Args[1:], marker, c.output())
	return ""
}

// stop sends SIGTERM and demands a clean exit.
func (c *child) stop(t *testing.T) {
	t.Helper()
	c.cmd.Process.Signal(syscall.SIGTERM)
	select {
	case <-c.done:
	case <-time.After(30 * time.Second):
		t.Fatalf("%v did not stop on SIGTERM:\n%s", c.cmd.Args[1:], c.output())
	}
	if c.err != nil {
		t.Fatalf("%v: %v\n%s", c.cmd.Args[1:], c.err, c.output())
	}
}

func (c *child) kill() {
	c.cmd.Process.Signal(syscall.SIGKILL)
	<-c.done
}

// shardStatus is the part of the API's /v1/status line the tests read.
type shardStatus struct {
	Shard        int               `json:"shard"`
	CutSeq       uint64            `json:"cut_seq"`
	CommittedSeq uint64            `json:"committed_seq"`
	AppliedSeq   uint64            `json:"applied_seq"`
	Applied      uint64            `json:"applied"`
	Rejected     map[string]uint64 `json:"rejected"`
	Ready        bool              `json:"ready"`
}

func localStatus(t *testing.T, base string) (shardStatus, error) {
	resp, err := http.Get(base + "/v1/status?local=true")
	if err != nil {
		return shardStatus{}, err
	}
	defer resp.Body.Close()
	var body struct{ Shards []shardStatus }
	if err := json.NewDecoder(resp.Body).Decode(&body); err != nil || len(body.Shards) != 1 {
		return shardStatus{}, fmt.Errorf("status: %v (%d shards)", err, len(body.Shards))
	}
	return body.Shards[0], nil
}

// waitStatus polls a worker's API until done holds for its status.
func waitStatus(t *testing.T, c *child, base, what string, done func(shardStatus) bool) shardStatus {
	t.Helper()
	deadline := time.Now().Add(90 * time.Second)
	for {
		st, err := localStatus(t, base)
		if err == nil && done(st) {
			return st
		}
		select {
		case <-c.done:
			t.Fatalf("%v exited (%v):\n%s", c.cmd.Args[1:], c.err, c.output())
		default:
		}
		if time.Now().After(deadline) {
			t.Fatalf("%s did not happen: status %+v (%v):\n%s", what, st, err, c.output())
		}
		time.Sleep(20 * time.Millisecond)
	}
}

// waitApplied polls a worker's API until it has applied the log up to seq:
// its reads then see everything up to there.
func waitApplied(t *testing.T, c *child, base string, seq uint64) shardStatus {
	t.Helper()
	return waitStatus(t, c, base, fmt.Sprintf("applying up to %d", seq), func(s shardStatus) bool { return s.AppliedSeq >= seq })
}

// waitCommitted polls a worker's API until its cut at seq is durable.
func waitCommitted(t *testing.T, c *child, base string, seq uint64) shardStatus {
	t.Helper()
	return waitStatus(t, c, base, fmt.Sprintf("committing the cut at %d", seq), func(s shardStatus) bool { return s.CommittedSeq >= seq })
}

// jsConnect connects to url for the rest of the test.
func jsConnect(t *testing.T, url string) jetstream.JetStream {
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
	return js
}

// streamLast returns the last sequence of the log stream name.
func streamLast(t *testing.T, url, name string) uint64 {
	t.Helper()
	js := jsConnect(t, url)
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

// replayFinal runs replay over the inputs and returns its final orbit
// matrix by node and the number of events it applied.
func replayFinal(t *testing.T, inputs ...string) (map[string][]uint64, uint64) {
	t.Helper()
	out := t.TempDir()
	args := []string{"replay", "--out", out, "--checkpoint-every", "1000000000"}
	for _, in := range inputs {
		args = append(args, "--input", in)
	}
	text, code := run(t, args...)
	if code != 0 {
		t.Fatalf("replay: exit %d\n%s", code, text)
	}
	m := regexp.MustCompile(`(\d+) lines read, (\d+) applied`).FindStringSubmatch(text)
	if m == nil {
		t.Fatalf("replay summary not found:\n%s", text)
	}
	files, _ := filepath.Glob(filepath.Join(out, "*.csv"))
	if len(files) != 1 {
		t.Fatalf("replay wrote %v", files)
	}
	_, rows := readMatrix(t, files[0])
	applied, _ := strconv.ParseUint(m[2], 10, 64)
	return rows, applied
}

// workerCuts is the cut spacing the tests give workers: their logs have an
// event a second, so a cut holds about sixty.
const workerCuts = "1m"

// published is what a stream holds after the tests publish files with
// publishFile or the publish command: every line that decodes, in order,
// at stream sequences 1, 2, … (raw messages are added by the caller).
func published(t *testing.T, paths ...string) []stream.Event {
	t.Helper()
	var out []stream.Event
	for _, path := range paths {
		r, err := stream.Open(path, stream.Options{})
		if err != nil {
			t.Fatal(err)
		}
		for {
			ev, err := r.Next()
			if err == io.EOF {
				break
			}
			if err == nil {
				out = append(out, ev)
			}
		}
		r.Close()
	}
	return out
}

// expectation is what a worker following a stream must hold: every
// node's vector at the end, and, in its store, the cuts the log makes
// with workerCuts and every node's vector at the last of them.
type expectation struct {
	final   map[string][]uint64
	cuts    []uint64
	atLast  map[string][]uint64
	applied uint64
}

// expect applies log (nil entries are malformed messages) at stream
// sequences 1, 2, … in one applier with the workers' cuts.
func expect(t *testing.T, log []*stream.Event) expectation {
	t.Helper()
	c, err := shard.NewCounting(delta.Undirected, 4)
	if err != nil {
		t.Fatal(err)
	}
	every, _ := time.ParseDuration(workerCuts)
	a := shard.NewApplier(c, 0, shard.Cuts{Every: every})
	var e expectation
	a.OnCut = func(cp *storage.Checkpoint) error {
		e.cuts = append(e.cuts, cp.Seq)
		e.atLast = vectorsOf(t, a)
		return nil
	}
	for i, ev := range log {
		seq := uint64(i + 1)
		var err error
		if ev == nil {
			err = a.RejectLine(seq, "malformed bus message")
		} else {
			err = a.Apply(seq, *ev)
		}
		var rj *shard.Reject
		if err != nil && !errors.As(err, &rj) {
			t.Fatal(err)
		}
	}
	e.final, e.applied = vectorsOf(t, a), a.Stats().Applied
	return e
}

func vectorsOf(t *testing.T, a *shard.Applier) map[string][]uint64 {
	t.Helper()
	vec, err := a.Vectors()
	if err != nil {
		t.Fatal(err)
	}
	out := map[string][]uint64{}
	for x, name := range a.Names() {
		out[name] = append([]uint64(nil), vec.Row(uint32(x))...)
	}
	return out
}

// pointers turns events into a log of non-nil entries.
func pointers(evs []stream.Event) []*stream.Event {
	out := make([]*stream.Event, len(evs))
	for i := range evs {
		out[i] = &evs[i]
	}
	return out
}

// readAllNodes reads every node of want from a worker's API (now).
func readAllNodes(t *testing.T, base string, want map[string][]uint64) map[string][]uint64 {
	t.Helper()
	got := map[string][]uint64{}
	for id := range want {
		r, code := getNode(t, base, id)
		if code != http.StatusOK || r.Node != id {
			t.Fatalf("node %q: status %d, %+v", id, code, r)
		}
		got[id] = r.Orbits
	}
	return got
}

// checkStored holds a stopped worker's data directory to the expectation:
// its last cut and every node's vector there.
func checkStored(t *testing.T, what, dir string, e expectation) {
	t.Helper()
	got, st := loadVectors(t, dir)
	if st.cut.Seq != e.cuts[len(e.cuts)-1] {
		t.Fatalf("%s: last cut at %d, want %d", what, st.cut.Seq, e.cuts[len(e.cuts)-1])
	}
	sameVectors(t, what, got, e.atLast)
}

// startWorker starts `orbitwatch worker` for shard i of n and returns it
// with its API's base URL.
func startWorker(t *testing.T, url, name string, i, n int, data string, extra ...string) (*child, string) {
	t.Helper()
	args := append([]string{"worker", "--nats", url, "--stream", name, "--subject", strings.ToLower(name) + ".events",
		"--shard", strconv.Itoa(i), "--shards", strconv.Itoa(n), "--data", data, "--http", "127.0.0.1:0", "--cut-every", workerCuts}, extra...)
	c := startChild(t, args...)
	return c, c.waitFor(t, "HTTP API ")
}

// publishFile publishes an edge log in this process, at most rate events
// per second (0: as fast as it goes), and returns how many were sent.
func publishFile(t *testing.T, url, name, path string, rate int) int {
	return publishFileOr(t, url, name, path, rate, t.Error)
}

// publishFileOr is publishFile that hands failures to report.
func publishFileOr(t *testing.T, url, name, path string, rate int, report func(...any)) int {
	t.Helper()
	nc, err := nats.Connect(url, nats.MaxReconnects(-1), nats.ReconnectWait(100*time.Millisecond))
	if err != nil {
		report(err)
		return 0
	}
	defer nc.Close()
	js, _ := jetstream.New(nc)
	ctx := context.Background()
	subject := strings.ToLower(name) + ".events"
	if _, err := stream.EnsureStream(ctx, js, name, subject, 1); err != nil {
		report(err)
		return 0
	}
	r, err := stream.Open(path, stream.Options{})
	if err != nil {
		report(err)
		return 0
	}
	defer r.Close()
	p := stream.NewPublisher(js, subject, stream.PublisherOptions{Stream: name, MaxPending: 256})
	start := time.Now()
	n := 0
	for {
		ev, err := r.Next()
		if err == io.EOF {
			break
		}
		if err != nil {
			continue // bad lines are not events: replay rejects them too
		}
		if err := p.Publish(ctx, ev); err != nil {
			report(err)
			return n
		}
		n++
		if rate > 0 && n%64 == 0 {
			if ahead := time.Duration(n)*time.Second/time.Duration(rate) - time.Since(start); ahead > 0 {
				time.Sleep(ahead)
			}
		}
	}
	if err := p.Flush(ctx); err != nil {
		report(err)
	}
	return n
}

// publishRaw publishes bytes that are no event onto the log subject.
func publishRaw(t *testing.T, url, name string, msgs [][]byte) {
	t.Helper()
	js := jsConnect(t, url)
	for i, m := range msgs {
		if _, err := js.Publish(context.Background(), strings.ToLower(name)+".events", m, jetstream.WithMsgID(fmt.Sprintf("junk-%d", i))); err != nil {
			t.Fatal(err)
		}
	}
}

func startEmbedded(t *testing.T) *stream.Embedded {
	t.Helper()
	srv, err := stream.StartEmbedded(stream.EmbeddedOptions{StoreDir: t.TempDir()})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(srv.Shutdown)
	return srv
}

// TestThreeWorkersEqualOne runs one worker process on one deployment and
// three on another, both fed the same log with malformed messages in the
// middle: every worker answers every node with replay's vector, holds in
// its store the cuts of one applier over the same messages, passes
// verify, and every malformed message is rejected, counted and kept once
// on the rejects stream.
func TestThreeWorkersEqualOne(t *testing.T) {
	dir := t.TempDir()
	a, b := filepath.Join(dir, "a.csv"), filepath.Join(dir, "b.csv")
	writeLog(t, a, 2500, 21)
	writeLog(t, b, 2500, 22)
	want, applied := replayFinal(t, a, b)
	srv := startEmbedded(t)
	junk := [][]byte{[]byte("{\"src\":\"acct-1\"}"), {0x01, 0x07}, []byte("hello"), {0x02}}
	log := pointers(published(t, a))
	for range junk {
		log = append(log, nil)
	}
	log = append(log, pointers(published(t, b))...)
	e := expect(t, log)
	sameVectors(t, "the expectation vs replay", e.final, want)

	type worker struct {
		c    *child
		base string
		data string
	}
	var ws []worker
	for _, d := range []struct {
		name string
		n    int
	}{{"ONE", 1}, {"THREE", 3}} {
		for i := range d.n {
			data := filepath.Join(dir, fmt.Sprint(d.name, "-", i))
			c, u := startWorker(t, srv.URL(), d.name, i, d.n, data)
			ws = append(ws, worker{c, u, data})
		}
	}
	for _, name := range []string{"ONE", "THREE"} {
		publishFile(t, srv.URL(), name, a, 0)
		publishRaw(t, srv.URL(), name, junk)
		publishFile(t, srv.URL(), name, b, 0)
	}
	for _, w := range ws {
		st := waitApplied(t, w.c, w.base, uint64(len(log)))
		if st.Applied != applied || st.Rejected["malformed bus message"] != uint64(len(junk)) {
			t.Fatalf("shard %d: status %+v, want %d applied and %d malformed", st.Shard, st, applied, len(junk))
		}
		sameVectors(t, fmt.Sprintf("worker %s vs replay", w.data), readAllNodes(t, w.base, want), want)
		waitCommitted(t, w.c, w.base, e.cuts[len(e.cuts)-1])
	}
	var rejected uint64
	for k, n := range ws[1].c.statusRejected(t, ws[1].base) {
		_ = k
		rejected += n
	}
	for _, w := range ws {
		w.c.stop(t)
		checkStored(t, "data directory of "+w.data, w.data, e)
		out, code := run(t, "verify", "--data", w.data)
		if code != 0 || !strings.Contains(out, "every vector derived from the stored records equals the static recount") {
			t.Fatalf("verify %s: exit %d\n%s", w.data, code, out)
		}
	}

	// The rejects stream keeps each rejected message once, with its reason.
	rs, err := jsConnect(t, srv.URL()).Stream(context.Background(), "THREE_REJECTS")
	if err != nil {
		t.Fatal(err)
	}
	info, _ := rs.Info(context.Background())
	if info.State.Msgs != rejected {
		t.Fatalf("rejects stream keeps %d messages, %d rejected", info.State.Msgs, rejected)
	}
	m, err := rs.GetMsg(context.Background(), info.State.FirstSeq)
	if err != nil || m.Header.Get(shard.RejectReasonHeader) == "" || m.Header.Get(shard.RejectSeqHeader) == "" {
		t.Fatalf("first kept reject %+v (%v) lacks its reason or sequence", m, err)
	}
}

// statusRejected returns the rejects a worker counted by reason.
func (c *child) statusRejected(t *testing.T, base string) map[string]uint64 {
	t.Helper()
	st, err := localStatus(t, base)
	if err != nil {
		t.Fatal(err)
	}
	return st.Rejected
}

// TestWorkerSurvivesSIGKILL kills worker processes with SIGKILL while the
// log is being published, restarts them on their data directories, and
// demands replay's vectors and applied count at the end, and in every
// store the cuts of an uninterrupted applier: nothing lost, nothing
// counted twice, no cut moved.
func TestWorkerSurvivesSIGKILL(t *testing.T) {
	dir := t.TempDir()
	log := filepath.Join(dir, "log.csv")
	writeLog(t, log, 6000, 41)
	want, applied := replayFinal(t, log)
	e := expect(t, pointers(published(t, log)))
	srv := startEmbedded(t)
	const n = 2
	data := []string{filepath.Join(dir, "w0"), filepath.Join(dir, "w1")}
	ws, urls := make([]*child, n), make([]string, n)
	for i := range n {
		ws[i], urls[i] = startWorker(t, srv.URL(), "KILL", i, n, data[i])
	}
	done := make(chan int, 1)
	go func() { done <- publishFile(t, srv.URL(), "KILL", log, 2000) }()
	r := rand.New(rand.NewPCG(9, 9))
	midStream := 0
	for k := 0; k < 6; k++ {
		time.Sleep(time.Duration(150+r.IntN(350)) * time.Millisecond)
		i := k % n
		ws[i].kill()
		select {
		case <-done:
			done <- 0
		default:
			midStream++
		}
		ws[i], urls[i] = startWorker(t, srv.URL(), "KILL", i, n, data[i])
	}
	<-done
	if midStream < 3 {
		t.Fatalf("only %d kills landed while the log was being published", midStream)
	}
	last := streamLast(t, srv.URL(), "KILL")
	for i := range n {
		if st := waitApplied(t, ws[i], urls[i], last); st.Applied != applied {
			t.Fatalf("shard %d applied %d events after its restarts, replay %d", i, st.Applied, applied)
		}
		sameVectors(t, "worker killed and restarted vs replay", readAllNodes(t, urls[i], want), want)
		waitCommitted(t, ws[i], urls[i], e.cuts[len(e.cuts)-1])
	}
	for i := range n {
		ws[i].stop(t)
		checkStored(t, "data directory after kills", data[i], e)
	}
}

func freePort(t *testing.T) string {
	t.Helper()
	ln, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	defer ln.Close()
	return ln.Addr().String()
}

// TestNATSServerRestart kills the NATS server (a child process) with
// SIGKILL while two workers follow a log being published with the publish
// command, starts it again on the same store and port, and runs publish
// again until it has stored the whole file (it resumes after the last
// event stored, in file order), then publishes a second file: the workers
// ride out the outage and end at replay's vectors and cuts.
func TestNATSServerRestart(t *testing.T) {
	dir := t.TempDir()
	a, b := filepath.Join(dir, "a.csv"), filepath.Join(dir, "b.csv")
	writeLog(t, a, 3000, 51)
	writeLog(t, b, 1500, 52)
	want, applied := replayFinal(t, a, b)
	e := expect(t, pointers(published(t, a, b)))
	addr, store := freePort(t), filepath.Join(dir, "nats")
	server := startChild(t, "nats-server", "--store", store, "--listen", addr)
	url := server.waitFor(t, "NATS ")
	const n = 2
	data := []string{filepath.Join(dir, "w0"), filepath.Join(dir, "w1")}
	ws, urls := make([]*child, n), make([]string, n)
	for i := range n {
		ws[i], urls[i] = startWorker(t, url, "RESTART", i, n, data[i])
	}
	pub := startChild(t, "publish", "--nats", url, "--stream", "RESTART", "--subject", "restart.events", "--input", a)
	time.Sleep(300 * time.Millisecond)
	server.kill()
	<-pub.done
	server = startChild(t, "nats-server", "--store", store, "--listen", addr)
	server.waitFor(t, "NATS ")
	for range 5 {
		if _, code := run(t, "publish", "--nats", url, "--stream", "RESTART", "--subject", "restart.events", "--input", a); code == 0 {
			break
		}
		time.Sleep(200 * time.Millisecond)
	}
	if _, code := run(t, "publish", "--nats", url, "--stream", "RESTART", "--subject", "restart.events", "--input", b); code != 0 {
		t.Fatal("publishing the second file failed")
	}
	last := streamLast(t, url, "RESTART")
	if last != uint64(len(published(t, a, b))) {
		t.Fatalf("the stream holds %d messages, the files %d events: publish lost or repeated some", last, len(published(t, a, b)))
	}
	for i := range n {
		if st := waitApplied(t, ws[i], urls[i], last); st.Applied != applied {
			t.Fatalf("shard %d applied %d events across the restart, replay %d", i, st.Applied, applied)
		}
		sameVectors(t, "worker across a server restart vs replay", readAllNodes(t, urls[i], want), want)
		waitCommitted(t, ws[i], urls[i], e.cuts[len(e.cuts)-1])
	}
	for i := range n {
		ws[i].stop(t)
		checkStored(t, "data directory across a server restart", data[i], e)
	}
}
