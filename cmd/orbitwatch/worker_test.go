package main

import (
	"bytes"
	"context"
	"encoding/json"
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

	"orbitwatch/shard"
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
	Shard      int               `json:"shard"`
	CutSeq     uint64            `json:"cut_seq"`
	AppliedSeq uint64            `json:"applied_seq"`
	Applied    uint64            `json:"applied"`
	Rejected   map[string]uint64 `json:"rejected"`
	Ready      bool              `json:"ready"`
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

// waitCut polls a worker's API until its cut reaches seq.
func waitCut(t *testing.T, c *child, base string, seq uint64) shardStatus {
	t.Helper()
	deadline := time.Now().Add(90 * time.Second)
	for {
		st, err := localStatus(t, base)
		if err == nil && st.CutSeq >= seq {
			return st
		}
		select {
		case <-c.done:
			t.Fatalf("%v exited (%v):\n%s", c.cmd.Args[1:], c.err, c.output())
		default:
		}
		if time.Now().After(deadline) {
			t.Fatalf("cut %d (%v), want %d:\n%s", st.CutSeq, err, seq, c.output())
		}
		time.Sleep(20 * time.Millisecond)
	}
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

// ownedVectors reads the vectors a stopped worker's data directory holds
// for the nodes its shard owns.
func ownedVectors(t *testing.T, dir string, i, n int) map[string][]uint64 {
	t.Helper()
	all, _ := loadVectors(t, dir)
	out := map[string][]uint64{}
	for name, v := range all {
		if shard.OwnerOf(name, n) == i {
			out[name] = v
		}
	}
	return out
}

// startWorker starts `orbitwatch worker` for shard i of n and returns it
// with its API's base URL.
func startWorker(t *testing.T, url, name string, i, n int, data string, extra ...string) (*child, string) {
	t.Helper()
	args := append([]string{"worker", "--nats", url, "--stream", name, "--subject", strings.ToLower(name) + ".events",
		"--shard", strconv.Itoa(i), "--shards", strconv.Itoa(n), "--data", data, "--http", "127.0.0.1:0", "--batch", "128"}, extra...)
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
// middle: the three shards' owned vectors together are exactly the one
// worker's, both are replay's, and every malformed message is rejected,
// counted and kept on the rejects stream.
func TestThreeWorkersEqualOne(t *testing.T) {
	dir := t.TempDir()
	a, b := filepath.Join(dir, "a.csv"), filepath.Join(dir, "b.csv")
	writeLog(t, a, 2500, 21)
	writeLog(t, b, 2500, 22)
	want, applied := replayFinal(t, a, b)
	srv := startEmbedded(t)
	junk := [][]byte{[]byte("{\"src\":\"acct-1\"}"), {0x01, 0x07}, []byte("hello"), {0x02}}

	one, oneURL := startWorker(t, srv.URL(), "ONE", 0, 1, filepath.Join(dir, "one"))
	var three []*child
	var threeURL []string
	for i := range 3 {
		c, u := startWorker(t, srv.URL(), "THREE", i, 3, filepath.Join(dir, fmt.Sprint("three-", i)))
		three, threeURL = append(three, c), append(threeURL, u)
	}
	for _, name := range []string{"ONE", "THREE"} {
		publishFile(t, srv.URL(), name, a, 0)
		publishRaw(t, srv.URL(), name, junk)
		publishFile(t, srv.URL(), name, b, 0)
	}
	check := func(c *child, base string, last uint64) shardStatus {
		st := waitCut(t, c, base, last)
		if st.Applied != applied {
			t.Fatalf("shard %d applied %d events, replay %d", st.Shard, st.Applied, applied)
		}
		if st.Rejected["malformed bus message"] != uint64(len(junk)) {
			t.Fatalf("shard %d counted rejects %v, want %d malformed", st.Shard, st.Rejected, len(junk))
		}
		return st
	}
	check(one, oneURL, streamLast(t, srv.URL(), "ONE"))
	var rejected uint64
	for i := range three {
		st := check(three[i], threeURL[i], streamLast(t, srv.URL(), "THREE"))
		if i == 0 {
			for _, k := range st.Rejected {
				rejected += k
			}
		}
	}
	one.stop(t)
	got := ownedVectors(t, filepath.Join(dir, "one"), 0, 1)
	sameVectors(t, "one worker vs replay", got, want)
	union := map[string][]uint64{}
	for i, c := range three {
		c.stop(t)
		for n, v := range ownedVectors(t, filepath.Join(dir, fmt.Sprint("three-", i)), i, 3) {
			union[n] = v
		}
	}
	sameVectors(t, "three workers vs one", union, got)
	// verify recounts each shard's stored graph statically and compares
	// the vectors the shard owns: an independent check of what the
	// shuffle delivered.
	for i := range three {
		out, code := run(t, "verify", "--data", filepath.Join(dir, fmt.Sprint("three-", i)))
		if code != 0 || !strings.Contains(out, "every stored vector equals the static recount") {
			t.Fatalf("verify shard %d: exit %d\n%s", i, code, out)
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

// TestWorkerSurvivesSIGKILL kills worker processes with SIGKILL while the
// log is being published, restarts them on their data directories, and
// demands replay's vectors and applied count at the end: nothing lost,
// nothing counted twice.
func TestWorkerSurvivesSIGKILL(t *testing.T) {
	dir := t.TempDir()
	log := filepath.Join(dir, "log.csv")
	writeLog(t, log, 6000, 41)
	want, applied := replayFinal(t, log)
	srv := startEmbedded(t)
	const n = 2
	data := []string{filepath.Join(dir, "w0"), filepath.Join(dir, "w1")}
	ws, urls := make([]*child, n), make([]string, n)
	for i := range n {
		ws[i], urls[i] = startWorker(t, srv.URL(), "KILL", i, n, data[i])
	}
	published := make(chan int, 1)
	go func() { published <- publishFile(t, srv.URL(), "KILL", log, 2000) }()
	r := rand.New(rand.NewPCG(9, 9))
	midStream := 0
	for k := 0; k < 6; k++ {
		time.Sleep(time.Duration(150+r.IntN(350)) * time.Millisecond)
		i := k % n
		ws[i].kill()
		select {
		case <-published:
			published <- 0
		default:
			midStream++
		}
		ws[i], urls[i] = startWorker(t, srv.URL(), "KILL", i, n, data[i])
	}
	<-published
	if midStream < 3 {
		t.Fatalf("only %d kills landed while the log was being published", midStream)
	}
	last := streamLast(t, srv.URL(), "KILL")
	for i := range n {
		if st := waitCut(t, ws[i], urls[i], last); st.Applied != applied {
			t.Fatalf("shard %d applied %d events after its restarts, replay %d", i, st.Applied, applied)
		}
	}
	union := map[string][]uint64{}
	for i := range n {
		ws[i].stop(t)
		for k, v := range ownedVectors(t, data[i], i, n) {
			union[k] = v
		}
	}
	sameVectors(t, "workers killed and restarted vs replay", union, want)
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
// SIGKILL while two workers follow the log being published, starts it
// again on the same store and port, publishes the whole log again (the
// events lost with the server are stored now, the others are duplicates)
// and then more: the workers ride out the outage and end at replay's
// vectors.
func TestNATSServerRestart(t *testing.T) {
	dir := t.TempDir()
	a, b := filepath.Join(dir, "a.csv"), filepath.Join(dir, "b.csv")
	writeLog(t, a, 3000, 51)
	writeLog(t, b, 1500, 52)
	want, applied := replayFinal(t, a, b)
	addr, store := freePort(t), filepath.Join(dir, "nats")
	server := startChild(t, "nats-server", "--store", store, "--listen", addr)
	url := server.waitFor(t, "NATS ")
	const n = 2
	data := []string{filepath.Join(dir, "w0"), filepath.Join(dir, "w1")}
	ws, urls := make([]*child, n), make([]string, n)
	for i := range n {
		ws[i], urls[i] = startWorker(t, url, "RESTART", i, n, data[i])
	}
	published := make(chan int, 1)
	go func() { published <- publishFileOr(t, url, "RESTART", a, 3000, func(...any) {}) }()
	time.Sleep(500 * time.Millisecond)
	server.kill()
	select {
	case <-published:
		t.Fatal("the log was published before the server was killed")
	default:
	}
	time.Sleep(500 * time.Millisecond)
	server = startChild(t, "nats-server", "--store", store, "--listen", addr)
	server.waitFor(t, "NATS ")
	<-published
	publishFile(t, url, "RESTART", a, 0)
	publishFile(t, url, "RESTART", b, 0)
	last := streamLast(t, url, "RESTART")
	for i := range n {
		if st := waitCut(t, ws[i], urls[i], last); st.Applied != applied {
			t.Fatalf("shard %d applied %d events across the restart, replay %d", i, st.Applied, applied)
		}
	}
	union := map[string][]uint64{}
	for i := range n {
		ws[i].stop(t)
		for k, v := range ownedVectors(t, data[i], i, n) {
			union[k] = v
		}
	}
	sameVectors(t, "workers across a server restart vs replay", union, want)
}
