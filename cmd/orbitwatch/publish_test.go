package main

import (
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/nats-io/nats.go/jetstream"

	"orbitwatch/stream"
)

// TestPublishJSONAndBadLines publishes in the JSON form: the stored
// messages decode to the file's events with their derived ids, and bad
// lines are counted, written to --rejects, or stop the run under --strict.
func TestPublishJSONAndBadLines(t *testing.T) {
	dir := t.TempDir()
	log := filepath.Join(dir, "log.csv")
	writeLog(t, log, 2000, 61) // lines 1000 and 2000 have a bad op
	srv := startEmbedded(t)
	rejects := filepath.Join(dir, "rejects.csv")
	stored, dups, last := publishCmd(t, "--nats", srv.URL(), "--stream", "JSONLOG", "--subject", "jsonlog.events", "--json", "--input", log, "--rejects", rejects)
	if stored != 1998 || dups != 0 || last != 1998 {
		t.Fatalf("%d stored, %d duplicates, last seq %d; want 1998, 0, 1998", stored, dups, last)
	}
	if b, err := os.ReadFile(rejects); err != nil || strings.Count(string(b), "\n") != 3 || !strings.Contains(string(b), ",1000,") {
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
	if code != 2 || !strings.Contains(out, "line 1000") {
		t.Fatalf("--strict: exit %d, want 2 naming line 1000\n%s", code, out)
	}
}

// TestPublishFailsWhenTheServerRefuses: a stream that takes no more
// messages makes publish exit non-zero and say why.
func TestPublishFailsWhenTheServerRefuses(t *testing.T) {
	dir := t.TempDir()
	log := filepath.Join(dir, "log.csv")
	writeLog(t, log, 300, 62)
	srv := startEmbedded(t)
	js := jsConnect(t, srv.URL())
	ctx, cancel := context.WithTimeout(context.Background(), 10*time.Second)
	defer cancel()
	if _, err := js.CreateStream(ctx, jetstream.StreamConfig{Name: "SMALL", Subjects: []string{"small.events"}, MaxMsgs: 100, Discard: jetstream.DiscardNew}); err != nil {
		t.Fatal(err)
	}
	out, code := run(t, "publish", "--nats", srv.URL(), "--stream", "SMALL", "--subject", "small.events", "--input", log)
	if code != 1 || !strings.Contains(out, "100 stored") || !strings.Contains(strings.ToLower(out), "maximum messages") {
		t.Fatalf("publish into a full stream: exit %d, want 1 with 100 stored and the server's reason\n%s", code, out)
	}
	if out, code := run(t, "publish", "--input", log); code != 1 || !strings.Contains(out, "--nats") {
		t.Fatalf("publish without --nats: exit %d\n%s", code, out)
	}
}
