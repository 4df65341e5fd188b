package main

import (
	"bytes"
	"compress/gzip"
	"context"
	"io"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
	"time"

	"github.com/nats-io/nats.go/jetstream"

	"orbitwatch/shard"
	"orbitwatch/stream"
)

// TestPublishJSONAndBadLines publishes in the JSON form: the stored
// messages decode to the file's events with their derived ids, and bad
// lines are counted, written to --rejects, or stop the run under --strict.
func TestPublishJSONAndBadLines(t *testing.T) {
	dir := t.TempDir()
	log := filepath.Join(dir, "log.csv")
	writeLog(t, log, 2000, 61) // data lines 1000 and 2000 (file lines 1001 and 2001) have a bad op
	srv := startEmbedded(t)
	rejects := filepath.Join(dir, "rejects.csv")
	stored, dups, last := publishCmd(t, "--nats", srv.URL(), "--stream", "JSONLOG", "--subject", "jsonlog.events", "--json", "--input", log, "--rejects", rejects)
	if stored != 1998 || dups != 0 || last != 1998 {
		t.Fatalf("%d stored, %d duplicates, last seq %d; want 1998, 0, 1998", stored, dups, last)
	}
	if b, err := os.ReadFile(rejects); err != nil || strings.Count(string(b), "\n") != 3 || !strings.Contains(string(b), ",1001,") {
		t.Fatalf("rejects file (%v):\n%s", err, b)
	}
	r, err := stream.Open(log, stream.Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer r.Close()
	want, err := r.Next()
	if err != nil {
		t.Fatal(err)
	}
	s, err := jsConnect(t, srv.URL()).Stream(context.Background(), "JSONLOG")
	if err != nil {
		t.Fatal(err)
	}
	m, err := s.GetMsg(context.Background(), 1)
	if err != nil {
		t.Fatal(err)
	}
	if len(m.Data) == 0 || m.Data[0] != '{' || m.Header.Get(jetstream.MsgIDHeader) != want.ID {
		t.Fatalf("first message %q, id %q; want JSON with id %q", m.Data, m.Header.Get(jetstream.MsgIDHeader), want.ID)
	}
	got, err := stream.DecodeMessage(m.Data)
	if err != nil || got.ID != want.ID || got.Src != want.Src || got.Dst != want.Dst || got.Op != want.Op || !got.TS.Equal(want.TS) {
		t.Fatalf("first message decodes to %+v (%v), want %+v", got, err, want)
	}

	out, code := run(t, "publish", "--nats", srv.URL(), "--stream", "STRICT", "--subject", "strict.events", "--input", log, "--strict")
	if code != exitBadInput || !strings.Contains(out, "line 1001") {
		t.Fatalf("--strict: exit %d, want 3 (bad input) naming line 1001\n%s", code, out)
	}
}

// TestPublishFailsWhenTheServerRefuses: a stream that takes no more
// messages makes publish exit non-zero and say why.
func TestPublishFailsWhenTheServerRefuses(t *testing.T) {
	dir := t.TempDir()
	log := filepath.Join(dir, "log.csv")
	writeLog(t, log, 300, 62)
	srv := startEmbedded(t)
	createStream(t, srv.URL(), jetstream.StreamConfig{Name: "SMALL", Subjects: []string{"small.events"}, MaxMsgs: 100, Discard: jetstream.DiscardNew})
	out, code := run(t, "publish", "--nats", srv.URL(), "--stream", "SMALL", "--subject", "small.events", "--input", log)
	if code != 1 || !strings.Contains(out, "100 stored") || !strings.Contains(strings.ToLower(out), "maximum messages") {
		t.Fatalf("publish into a full stream: exit %d, want 1 with 100 stored and the server's reason\n%s", code, out)
	}
	if out, code := run(t, "publish", "--input", log); code != exitUsage || !strings.Contains(out, "--nats URL is required") {
		t.Fatalf("publish without --nats: exit %d\n%s", code, out)
	}
}

// logIDs returns the ids of a log's events in file order, as the sources
// derive them.
func logIDs(t *testing.T, path string) []string {
	t.Helper()
	r, err := stream.Open(path, stream.Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer r.Close()
	var ids []string
	for {
		ev, err := r.Next()
		if err == io.EOF {
			return ids
		}
		if err == nil {
			ids = append(ids, ev.ID)
		}
	}
}

// streamIDs returns the ids of every message in the stream, in stream
// order.
func streamIDs(t *testing.T, url, name string) []string {
	t.Helper()
	js := jsConnect(t, url)
	ctx, cancel := context.WithTimeout(context.Background(), 60*time.Second)
	defer cancel()
	s, err := js.Stream(ctx, name)
	if err != nil {
		t.Fatal(err)
	}
	last := s.CachedInfo().State.LastSeq
	c, err := stream.NewConsumer(ctx, js, name, 1)
	if err != nil {
		t.Fatal(err)
	}
	defer c.Close()
	var ids []string
	for seq := uint64(1); seq <= last; seq++ {
		_, ev, err := c.Next(ctx)
		if err != nil {
			t.Fatalf("message %d: %v", seq, err)
		}
		ids = append(ids, ev.ID)
	}
	return ids
}

// sameOrder fails unless the stream holds the log's events, in its order,
// each once.
func sameOrder(t *testing.T, what string, got, want []string) {
	t.Helper()
	seen := map[string]int{}
	for i, id := range got {
		if j, dup := seen[id]; dup {
			t.Fatalf("%s: event %s stored twice, at %d and %d", what, id, j+1, i+1)
		}
		seen[id] = i
	}
	for i := range min(len(got), len(want)) {
		if got[i] != want[i] {
			t.Fatalf("%s: message %d is %s, the log's event %d is %s", what, i+1, got[i], i+1, want[i])
		}
	}
	if len(got) != len(want) {
		t.Fatalf("%s: %d events stored, the log has %d", what, len(got), len(want))
	}
}

// TestPublishKeepsFileOrderAcrossServerKill kills the NATS server (a
// child process) with SIGKILL while publish runs and starts it again at
// once on the same store and port: publish stops, naming the first event
// not acknowledged; the same command run again resumes, and the stream
// holds the file's events in the file's order, each once.
func TestPublishKeepsFileOrderAcrossServerKill(t *testing.T) {
	dir := t.TempDir()
	log := filepath.Join(dir, "log.csv")
	writeLog(t, log, 300000, 63)
	addr, store := freePort(t), filepath.Join(dir, "nats")
	server := startChild(t, "nats-server", "--store", store, "--listen", addr)
	url := server.waitFor(t, "NATS ")
	pub := startChild(t, "publish", "--nats", url, "--input", log)
	js := jsConnect(t, url)
	deadline := time.Now().Add(60 * time.Second)
	for {
		ctx, cancel := context.WithTimeout(context.Background(), 2*time.Second)
		s, err := js.Stream(ctx, shard.DefaultStream)
		cancel()
		if err == nil && s.CachedInfo().State.Msgs >= 30000 {
			break
		}
		select {
		case <-pub.done:
			t.Fatalf("publish ended before the server was killed:\n%s", pub.output())
		default:
		}
		if time.Now().After(deadline) {
			t.Fatalf("the stream did not reach 30000 messages:\n%s", pub.output())
		}
		time.Sleep(10 * time.Millisecond)
	}
	// Killed and back at once, as a supervisor restarts it: a client that
	// reconnects in time could store what it held after a gap.
	server.kill()
	server = startChild(t, "nats-server", "--store", store, "--listen", addr)
	server.waitFor(t, "NATS ")
	select {
	case <-pub.done:
	case <-time.After(120 * time.Second):
		t.Fatalf("publish did not end after the server was killed:\n%s", pub.output())
	}
	out := pub.output()
	if pub.err == nil || !regexp.MustCompile(`stopped at line \d+ \(event [0-9a-f]+:\d+\), the first event not acknowledged`).MatchString(out) {
		t.Errorf("publish across the kill: %v, want a stop naming the line:\n%s", pub.err, out)
	}
	out, code := run(t, "publish", "--nats", url, "--input", log)
	if code != 0 {
		t.Fatalf("publish after the restart: exit %d\n%s", code, out)
	}
	want := logIDs(t, log)
	sameOrder(t, "after a kill and a resume", streamIDs(t, url, shard.DefaultStream), want)
	// Once more: nothing is stored.
	stored, dups, _ := publishCmd(t, "--nats", url, "--input", log)
	if stored != 0 || dups != len(want) {
		t.Fatalf("third publish: %d stored, %d duplicates; want 0 and %d", stored, dups, len(want))
	}
}

// TestPublishOnceBeyondDuplicateWindow: with the stream's duplicate window
// set to one second, a file published again two seconds later, under
// another name and gzipped, is stored once; a file grown by appending
// stores only its new events. Without the manifest the republish would be
// stored again (shown with --manifest "").
func TestPublishOnceBeyondDuplicateWindow(t *testing.T) {
	dir := t.TempDir()
	log := filepath.Join(dir, "log.csv")
	writeLog(t, log, 3000, 64)
	srv := startEmbedded(t)
	createStream(t, srv.URL(), jetstream.StreamConfig{Name: "SHORT", Subjects: []string{"short.events"}, Duplicates: time.Second})
	args := []string{"--nats", srv.URL(), "--stream", "SHORT", "--subject", "short.events"}
	stored, _, _ := publishCmd(t, append(args, "--input", log)...)
	want := logIDs(t, log)
	if stored != len(want) {
		t.Fatalf("first publish stored %d, want %d", stored, len(want))
	}
	time.Sleep(2 * time.Second)
	data, err := os.ReadFile(log)
	if err != nil {
		t.Fatal(err)
	}
	copyGz := filepath.Join(dir, "renamed.csv.gz")
	var buf bytes.Buffer
	zw := gzip.NewWriter(&buf)
	zw.Write(data)
	zw.Close()
	if err := os.WriteFile(copyGz, buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	if stored, dups, _ := publishCmd(t, append(args, "--input", copyGz)...); stored != 0 || dups != len(want) {
		t.Fatalf("republish after the window: %d stored, %d duplicates; want 0, %d", stored, dups, len(want))
	}
	sameOrder(t, "republished", streamIDs(t, srv.URL(), "SHORT"), want)

	grown := filepath.Join(dir, "grown.csv")
	if err := os.WriteFile(grown, append(data, "2026-02-01T00:00:00Z,add,acct-new,acct-newer\n"...), 0o644); err != nil {
		t.Fatal(err)
	}
	time.Sleep(2 * time.Second)
	if stored, _, _ := publishCmd(t, append(args, "--input", grown)...); stored != 1 {
		t.Fatalf("grown log stored %d, want 1", stored)
	}
	sameOrder(t, "grown", streamIDs(t, srv.URL(), "SHORT"), logIDs(t, grown))

	time.Sleep(2 * time.Second)
	if stored, _, _ := publishCmd(t, append(args, "--input", log, "--manifest", "")...); stored != len(want) {
		t.Fatalf("without the manifest after the window %d stored, want the whole log again (%d)", stored, len(want))
	}
}

// TestPublishRefusesBadIDs: an id longer than the limit, with a NUL byte
// or not UTF-8 is a bad line at publish, named with its file line; the
// other events are published.
func TestPublishRefusesBadIDs(t *testing.T) {
	dir := t.TempDir()
	log := filepath.Join(dir, "ids.csv")
	text := "src,dst\na,b\n" + strings.Repeat("x", 65000) + ",b\nc,d\x00e\nf\xff,g\nh,i\n"
	if err := os.WriteFile(log, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	srv := startEmbedded(t)
	rejects := filepath.Join(dir, "rejects.csv")
	out, code := run(t, "publish", "--nats", srv.URL(), "--input", log, "--rejects", rejects)
	if code != 0 || !strings.Contains(out, "2 stored") || !strings.Contains(out, "3 bad lines") {
		t.Fatalf("exit %d:\n%s", code, out)
	}
	b, err := os.ReadFile(rejects)
	if err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{`,3,"src too long: 65000 bytes`, ",4,dst contains a NUL byte", ",5,src is not valid UTF-8"} {
		if !strings.Contains(string(b), want) {
			t.Errorf("rejects lack %q:\n%.300s", want, b)
		}
	}
	sameOrder(t, "good events", streamIDs(t, srv.URL(), shard.DefaultStream), logIDs(t, log))
}

// createStream makes a stream of the given configuration on the server.
func createStream(t *testing.T, url string, cfg jetstream.StreamConfig) {
	t.Helper()
	ctx, cancel := context.WithTimeout(context.Background(), 10*time.Second)
	defer cancel()
	if _, err := jsConnect(t, url).CreateStream(ctx, cfg); err != nil {
		t.Fatal(err)
	}
}
