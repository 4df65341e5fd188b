package main

import (
	"context"
	"encoding/json"
	"errors"
	"net/http"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/nats-io/nats.go"
	"github.com/nats-io/nats.go/jetstream"

	"orbitwatch/shard"
)

// TestServeNATSNeedsItsKey runs serve: its NATS server admits the holder
// of the key it generated into the data directory (owner-only) and nobody
// else. publish and worker without the key are refused and told which flag
// to give; with --nkey they publish and follow the log; a client in this
// test process can neither connect without the key (so it cannot purge)
// nor is stopped from purging with it.
func TestServeNATSNeedsItsKey(t *testing.T) {
	dir := t.TempDir()
	log := filepath.Join(dir, "log.csv")
	writeLog(t, log, 300, 41)
	data := filepath.Join(dir, "data")
	srv := startChild(t, "serve", "--data", data, "--nats-listen", "127.0.0.1:0", "--http", "127.0.0.1:0")
	natsURL := srv.waitFor(t, "NATS ")
	srv.waitFor(t, "HTTP API ")
	key := filepath.Join(data, natsKeyFile)
	if shown := srv.waitFor(t, "authenticate with --nkey "); shown != key {
		t.Errorf("serve names the key %q, want %q", shown, key)
	}
	fi, err := os.Stat(key)
	if err != nil {
		t.Fatal(err)
	}
	if fi.Mode().Perm() != 0o600 {
		t.Errorf("key file mode %04o, want 0600", fi.Mode().Perm())
	}

	out, code := run(t, "publish", "--nats", natsURL, "--input", log)
	if code == 0 || !strings.Contains(strings.ToLower(out), "authorization violation") || !strings.Contains(out, "--nkey") {
		t.Fatalf("publish without the key: exit %d\n%s", code, out)
	}
	out, code = run(t, "worker", "--nats", natsURL, "--data", filepath.Join(dir, "w"), "--shard", "0", "--shards", "1", "--http", "")
	if code == 0 || !strings.Contains(strings.ToLower(out), "authorization violation") {
		t.Fatalf("worker without the key: exit %d\n%s", code, out)
	}
	if nc, err := nats.Connect(natsURL); err == nil {
		nc.Close()
		t.Fatal("a client without the key connected to serve's NATS server")
	} else if !errors.Is(err, nats.ErrAuthorization) {
		t.Errorf("connect without the key: %v", err)
	}

	stored, _, last := publishCmd(t, "--nats", natsURL, "--nkey", key, "--input", log)
	if stored == 0 {
		t.Fatal("publish with the key stored nothing")
	}
	w := startChild(t, "worker", "--nats", natsURL, "--nkey", key, "--data", filepath.Join(dir, "w"), "--shard", "0", "--shards", "1",
		"--deployment", "SECOND", "--http", "127.0.0.1:0")
	wbase := w.waitFor(t, "HTTP API ")
	deadline := time.Now().Add(60 * time.Second)
	for {
		var st struct {
			Shards []struct {
				AppliedSeq uint64 `json:"applied_seq"`
			}
		}
		resp, err := http.Get(wbase + "/v1/status?local=true")
		if err == nil {
			err = json.NewDecoder(resp.Body).Decode(&st)
			resp.Body.Close()
		}
		if err == nil && len(st.Shards) == 1 && st.Shards[0].AppliedSeq >= last {
			break
		}
		if time.Now().After(deadline) {
			t.Fatalf("worker with the key did not apply the log to %d: %+v %v\n%s", last, st, err, w.output())
		}
		time.Sleep(50 * time.Millisecond)
	}
	w.stop(t)

	opt, err := nats.NkeyOptionFromSeed(key)
	if err != nil {
		t.Fatal(err)
	}
	nc, err := nats.Connect(natsURL, opt)
	if err != nil {
		t.Fatalf("connect with the key: %v", err)
	}
	defer nc.Close()
	js, _ := jetstream.New(nc)
	ctx, cancel := context.WithTimeout(context.Background(), 30*time.Second)
	defer cancel()
	s, err := js.Stream(ctx, shard.DefaultStream)
	if err != nil {
		t.Fatal(err)
	}
	if err := s.Purge(ctx); err != nil {
		t.Fatalf("purge with the key: %v", err)
	}
	info, err := s.Info(ctx)
	if err != nil || info.State.Msgs != 0 {
		t.Fatalf("after a purge with the key: %+v %v", info, err)
	}
	srv.stop(t)
}

// TestNATSServerBeyondLoopback: the standalone server refuses to listen
// beyond loopback open, and listens there with an nkey.
func TestNATSServerBeyondLoopback(t *testing.T) {
	out, code := run(t, "nats-server", "--store", t.TempDir(), "--listen", "0.0.0.0:0")
	if code == 0 || !strings.Contains(out, "beyond loopback") {
		t.Fatalf("nats-server on 0.0.0.0 without a key: exit %d\n%s", code, out)
	}
	key := filepath.Join(t.TempDir(), "k.nk")
	c := startChild(t, "nats-server", "--store", t.TempDir(), "--listen", "0.0.0.0:0", "--nkey", key)
	c.waitFor(t, "NATS ")
	if _, err := os.Stat(key); err != nil {
		t.Errorf("no key file: %v", err)
	}
	c.stop(t)
}

// TestNATSCredentialFlags: one credential at a time, and a key file that
// does not load is named.
func TestNATSCredentialFlags(t *testing.T) {
	dir := t.TempDir()
	log := filepath.Join(dir, "log.csv")
	writeLog(t, log, 10, 43)
	out, code := run(t, "publish", "--nats", "nats://127.0.0.1:1", "--creds", filepath.Join(dir, "a.creds"), "--nkey", filepath.Join(dir, "b.nk"), "--input", log)
	if code == 0 || !strings.Contains(out, "--creds and --nkey: give one of them") {
		t.Errorf("--creds with --nkey: exit %d\n%s", code, out)
	}
	missing := filepath.Join(dir, "missing.nk")
	out, code = run(t, "publish", "--nats", "nats://127.0.0.1:1", "--nkey", missing, "--input", log)
	if code == 0 || !strings.Contains(out, "--nkey "+missing) {
		t.Errorf("--nkey of a missing file: exit %d\n%s", code, out)
	}
}
