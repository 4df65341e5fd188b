package stream

import (
	"context"
	"errors"
	"fmt"
	"net"
	"strconv"
	"time"

	"github.com/nats-io/nats-server/v2/server"
	"github.com/nats-io/nats.go"
	"github.com/nats-io/nats.go/jetstream"
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
}

// Embedded is a running in-process NATS server with JetStream.
type Embedded struct {
	srv *server.Server
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
	srv, err := server.NewServer(&server.Options{
		Host:      host,
		Port:      port,
		JetStream: true,
		StoreDir:  opts.StoreDir,
		NoSigs:    true,
		NoLog:     true,
	})
	if err != nil {
		return nil, fmt.Errorf("stream: embedded server: %w", err)
	}
	go srv.Start()
	e := &Embedded{srv: srv}
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
	nc, err := nats.Connect(e.URL(), nats.Timeout(timeout))
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

// URL is the client URL, e.g. "nats://127.0.0.1:41234".
func (e *Embedded) URL() string { return e.srv.ClientURL() }

// Shutdown stops the server and waits until it has stopped.
func (e *Embedded) Shutdown() {
	e.srv.Shutdown()
	e.srv.WaitForShutdown()
}
