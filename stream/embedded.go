package stream

import (
	"context"
	"errors"
	"fmt"
	"io/fs"
	"net"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"time"

	"github.com/nats-io/nats-server/v2/server"
	"github.com/nats-io/nats.go"
	"github.com/nats-io/nats.go/jetstream"
	"github.com/nats-io/nkeys"
)

// EmbeddedOptions configures an in-process NATS server with JetStream.
type EmbeddedOptions struct {
	// StoreDir is the JetStream store directory; required. A server
	// started again on the same directory finds its streams again.
	StoreDir string
	// Listen is host:port for clients; "" means "127.0.0.1:0", and port 0
	// a random free port.
	Listen string
	// ReadyTimeout bounds the wait for JetStream to answer; 0 means 10 s.
	ReadyTimeout time.Duration
	// NKeyFile, when set, makes the server admit only clients that prove
	// they hold the NATS user nkey whose seed is in this file (the nats
	// client's NkeyOptionFromSeed; `orbitwatch publish --nkey FILE`).
	// A missing file is created with a fresh key, readable and writable
	// by its owner only (0600); a file that others may read or write is
	// refused. Without it the server admits anyone who reaches it, so
	// Listen must then be a loopback address.
	NKeyFile string
}

// Embedded is a running in-process NATS server with JetStream.
type Embedded struct {
	srv  *server.Server
	nkey string // the seed file, "" for an open server
}

// StartEmbedded starts a NATS server in this process with JetStream
// storing in opts.StoreDir, and returns once a JetStream account info
// request succeeds, not merely once the port accepts connections.
func StartEmbedded(opts EmbeddedOptions) (*Embedded, error) {
	if opts.StoreDir == "" {
		return nil, errors.New("stream: embedded server: StoreDir is required")
	}
	listen := opts.Listen
	if listen == "" {
		listen = "127.0.0.1:0"
	}
	host, portText, err := net.SplitHostPort(listen)
	if err != nil {
		return nil, fmt.Errorf("stream: embedded server: listen %q: %w", listen, err)
	}
	port, err := strconv.Atoi(portText)
	if err != nil || port < 0 || port > 65535 {
		return nil, fmt.Errorf("stream: embedded server: listen %q: bad port", listen)
	}
	if port == 0 {
		port = server.RANDOM_PORT
	}
	timeout := opts.ReadyTimeout
	if timeout == 0 {
		timeout = 10 * time.Second
	}
	sopts := &server.Options{
		Host:      host,
		Port:      port,
		JetStream: true,
		StoreDir:  opts.StoreDir,
		NoSigs:    true,
		NoLog:     true,
	}
	if opts.NKeyFile == "" && !loopbackHost(host) {
		return nil, fmt.Errorf("stream: embedded server: listen %q reaches beyond loopback, and an open server there would let anyone publish to or purge the log: give it an nkey file", listen)
	}
	if opts.NKeyFile != "" {
		pub, err := LoadOrCreateNKey(opts.NKeyFile)
		if err != nil {
			return nil, fmt.Errorf("stream: embedded server: %w", err)
		}
		// A user without an account is in the global account, where the
		// streams of an open server were made: turning authentication on
		// keeps them.
		sopts.Nkeys = []*server.NkeyUser{{Nkey: pub}}
	}
	srv, err := server.NewServer(sopts)
	if err != nil {
		return nil, fmt.Errorf("stream: embedded server: %w", err)
	}
	go srv.Start()
	e := &Embedded{srv: srv, nkey: opts.NKeyFile}
	if !srv.ReadyForConnections(timeout) {
		srv.Shutdown()
		return nil, fmt.Errorf("stream: embedded server: not accepting connections after %v", timeout)
	}
	if err := e.waitJetStream(timeout); err != nil {
		srv.Shutdown()
		srv.WaitForShutdown()
		return nil, err
	}
	return e, nil
}

// waitJetStream asks for the JetStream account info until it is given.
func (e *Embedded) waitJetStream(timeout time.Duration) error {
	ctx, cancel := context.WithTimeout(context.Background(), timeout)
	defer cancel()
	nc, err := nats.Connect(e.URL(), append(e.ClientOptions(), nats.Timeout(timeout))...)
	if err != nil {
		return fmt.Errorf("stream: embedded server: connect: %w", err)
	}
	defer nc.Close()
	js, err := jetstream.New(nc)
	if err != nil {
		return fmt.Errorf("stream: embedded server: %w", err)
	}
	for {
		_, err := js.AccountInfo(ctx)
		if err == nil {
			return nil
		}
		select {
		case <-ctx.Done():
			return fmt.Errorf("stream: embedded server: JetStream not answering after %v: %w", timeout, err)
		case <-time.After(20 * time.Millisecond):
		}
	}
}

// NKeyFile is the seed file clients authenticate with; "" for an open
// server.
func (e *Embedded) NKeyFile() string { return e.nkey }

// ClientOptions are the connect options a client of this process needs:
// the nkey, when the server asks for one.
func (e *Embedded) ClientOptions() []nats.Option {
	if e.nkey == "" {
		return nil
	}
	// The seed is read, and the nonce signed, at each connect: the file
	// is the only place it is kept.
	opt, err := nats.NkeyOptionFromSeed(e.nkey)
	if err != nil {
		return []nats.Option{func(*nats.Options) error { return err }}
	}
	return []nats.Option{opt}
}

// LoadOrCreateNKey returns the public key of the NATS user nkey whose seed
// is in path, creating the file with a fresh key (mode 0600, in a directory
// created 0700 when missing) when there is none. A file that group or
// others may read or write is an error naming the fix.
func LoadOrCreateNKey(path string) (string, error) {
	if err := os.MkdirAll(filepath.Dir(path), 0o700); err != nil {
		return "", err
	}
	kp, err := nkeys.CreateUser()
	if err != nil {
		return "", err
	}
	seed, err := kp.Seed()
	if err != nil {
		return "", err
	}
	f, err := os.OpenFile(path, os.O_WRONLY|os.O_CREATE|os.O_EXCL, 0o600)
	switch {
	case err == nil:
		_, werr := f.Write(append(seed, '\n'))
		if err := errors.Join(werr, f.Sync(), f.Close()); err != nil {
			os.Remove(path)
			return "", fmt.Errorf("nkey file %s: %w", path, err)
		}
		return kp.PublicKey()
	case !errors.Is(err, fs.ErrExist):
		return "", fmt.Errorf("nkey file: %w", err)
	}
	fi, err := os.Stat(path)
	if err != nil {
		return "", fmt.Errorf("nkey file: %w", err)
	}
	if fi.Mode().Perm()&0o077 != 0 {
		return "", fmt.Errorf("nkey file %s may be read or written by others (mode %04o): chmod 600 %s", path, fi.Mode().Perm(), path)
	}
	b, err := os.ReadFile(path)
	if err != nil {
		return "", fmt.Errorf("nkey file: %w", err)
	}
	kp, err = nkeys.ParseDecoratedNKey(b)
	if err != nil {
		return "", fmt.Errorf("nkey file %s: %w", path, err)
	}
	defer kp.Wipe()
	pub, err := kp.PublicKey()
	if err != nil || !nkeys.IsValidPublicUserKey(pub) {
		return "", fmt.Errorf("nkey file %s: not a NATS user seed (one starting SU)", path)
	}
	return pub, nil
}

// loopbackHost reports whether host (an address to listen on) reaches this
// machine only: a loopback IP address or localhost. The empty host and
// 0.0.0.0 listen everywhere.
func loopbackHost(host string) bool {
	if strings.EqualFold(host, "localhost") {
		return true
	}
	ip := net.ParseIP(host)
	return ip != nil && ip.IsLoopback()
}

// URL is the client URL, e.g. "nats://127.0.0.1:41234".
func (e *Embedded) URL() string { return e.srv.ClientURL() }

// Shutdown stops the server and waits until it has stopped.
func (e *Embedded) Shutdown() {
	e.srv.Shutdown()
	e.srv.WaitForShutdown()
}
