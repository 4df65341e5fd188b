package stream

import (
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/nats-io/nats.go"
	"github.com/nats-io/nats.go/jetstream"
)

// TestEmbeddedNKey starts the embedded server with an nkey file: the file
// is made on first start, the owner's alone; a client without the key, or
// with another key, cannot connect, so it can neither publish nor purge;
// a client with it can do both; a restart on the same directory keeps the
// key and the stream.
func TestEmbeddedNKey(t *testing.T) {
	ctx := testContext(t)
	dir := t.TempDir()
	key := filepath.Join(dir, "secrets", "nats-user.nk")
	srv, err := StartEmbedded(EmbeddedOptions{StoreDir: filepath.Join(dir, "nats"), NKeyFile: key})
	if err != nil {
		t.Fatal(err)
	}
	fi, err := os.Stat(key)
	if err != nil {
		t.Fatal(err)
	}
	if fi.Mode().Perm() != 0o600 {
		t.Errorf("nkey file mode %04o, want 0600", fi.Mode().Perm())
	}
	if di, _ := os.Stat(filepath.Dir(key)); di.Mode().Perm() != 0o700 {
		t.Errorf("nkey directory mode %04o, want 0700", di.Mode().Perm())
	}
	seed, _ := os.ReadFile(key)
	if !strings.HasPrefix(string(seed), "SU") {
		t.Errorf("nkey file holds %.2q…, want a user seed (SU…)", seed)
	}

	// Without credentials, and with a key the server does not know.
	if nc, err := nats.Connect(srv.URL()); err == nil {
		nc.Close()
		t.Fatal("a client without the nkey connected")
	} else if !errors.Is(err, nats.ErrAuthorization) {
		t.Errorf("connect without the nkey: %v, want an authorization violation", err)
	}
	other := filepath.Join(t.TempDir(), "other.nk")
	if _, err := LoadOrCreateNKey(other); err != nil {
		t.Fatal(err)
	}
	opt, err := nats.NkeyOptionFromSeed(other)
	if err != nil {
		t.Fatal(err)
	}
	if nc, err := nats.Connect(srv.URL(), opt); err == nil {
		nc.Close()
		t.Fatal("a client with another nkey connected")
	}

	// With the key: create, publish, purge.
	nc, err := nats.Connect(srv.URL(), srv.ClientOptions()...)
	if err != nil {
		t.Fatalf("connect with the nkey: %v", err)
	}
	js, _ := jetstream.New(nc)
	s, err := EnsureStream(ctx, js, "LOG", "log.events", 1)
	if err != nil {
		t.Fatal(err)
	}
	for range 3 {
		if _, err := js.Publish(ctx, "log.events", []byte("x")); err != nil {
			t.Fatal(err)
		}
	}
	if err := s.Purge(ctx, jetstream.WithPurgeKeep(1)); err != nil {
		t.Fatalf("purge with the nkey: %v", err)
	}
	if n := streamMsgs(t, ctx, js, "LOG"); n != 1 {
		t.Fatalf("%d messages after a purge keeping 1", n)
	}
	nc.Close()
	srv.Shutdown()

	// Restarted on the same directory: the same key file, the same stream.
	srv, err = StartEmbedded(EmbeddedOptions{StoreDir: filepath.Join(dir, "nats"), NKeyFile: key})
	if err != nil {
		t.Fatal(err)
	}
	defer srv.Shutdown()
	if again, _ := os.ReadFile(key); string(again) != string(seed) {
		t.Error("restart replaced the nkey")
	}
	nc, err = nats.Connect(srv.URL(), srv.ClientOptions()...)
	if err != nil {
		t.Fatal(err)
	}
	defer nc.Close()
	js, _ = jetstream.New(nc)
	if n := streamMsgs(t, ctx, js, "LOG"); n != 1 {
		t.Fatalf("%d messages after a restart, want 1", n)
	}
}

// TestEmbeddedNKeyTurnedOn: a directory whose server ran open keeps its
// streams when the server starts with an nkey (users without an account
// are in the global account, where the open server kept them).
func TestEmbeddedNKeyTurnedOn(t *testing.T) {
	ctx := testContext(t)
	dir := t.TempDir()
	srv, js := startBus(t, dir)
	if _, err := EnsureStream(ctx, js, "LOG", "log.events", 1); err != nil {
		t.Fatal(err)
	}
	if _, err := js.Publish(ctx, "log.events", []byte("x")); err != nil {
		t.Fatal(err)
	}
	srv.Shutdown()
	srv, err := StartEmbedded(EmbeddedOptions{StoreDir: dir, NKeyFile: filepath.Join(t.TempDir(), "k.nk")})
	if err != nil {
		t.Fatal(err)
	}
	defer srv.Shutdown()
	nc, err := nats.Connect(srv.URL(), srv.ClientOptions()...)
	if err != nil {
		t.Fatal(err)
	}
	defer nc.Close()
	js2, _ := jetstream.New(nc)
	if n := streamMsgs(t, ctx, js2, "LOG"); n != 1 {
		t.Fatalf("%d messages once the nkey is on, want the 1 stored before", n)
	}
}

// TestEmbeddedRefusals: an open server beyond loopback, a key file others
// may read, and a file that holds no user seed are refused, each saying
// why; an nkey makes a wildcard listen address acceptable.
func TestEmbeddedRefusals(t *testing.T) {
	for _, listen := range []string{"0.0.0.0:0", ":0", "[::]:0"} {
		_, err := StartEmbedded(EmbeddedOptions{StoreDir: t.TempDir(), Listen: listen})
		if err == nil || !strings.Contains(err.Error(), "beyond loopback") {
			t.Errorf("open server on %s: %v, want a refusal", listen, err)
		}
	}
	for _, listen := range []string{"127.0.0.1:0", "localhost:0", "[::1]:0"} {
		if !loopbackHost(strings.TrimSuffix(strings.TrimPrefix(strings.TrimSuffix(listen, ":0"), "["), "]")) {
			t.Errorf("%s not taken as loopback", listen)
		}
	}
	key := filepath.Join(t.TempDir(), "k.nk")
	srv, err := StartEmbedded(EmbeddedOptions{StoreDir: t.TempDir(), Listen: "0.0.0.0:0", NKeyFile: key})
	if err != nil {
		t.Fatalf("server with an nkey on 0.0.0.0: %v", err)
	}
	srv.Shutdown()

	if err := os.Chmod(key, 0o644); err != nil {
		t.Fatal(err)
	}
	_, err = StartEmbedded(EmbeddedOptions{StoreDir: t.TempDir(), NKeyFile: key})
	if err == nil || !strings.Contains(err.Error(), "chmod 600") {
		t.Errorf("key file readable by others: %v, want a refusal naming chmod 600", err)
	}
	bad := filepath.Join(t.TempDir(), "bad.nk")
	if err := os.WriteFile(bad, []byte("not a seed\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	if _, err := StartEmbedded(EmbeddedOptions{StoreDir: t.TempDir(), NKeyFile: bad}); err == nil {
		t.Error("a key file without a seed accepted")
	}
}
