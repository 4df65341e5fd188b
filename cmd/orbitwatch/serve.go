package main

import (
	"context"
	"flag"
	"fmt"
	"os"
	"os/signal"
	"path/filepath"
	"syscall"

	"orbitwatch/shard"
	"orbitwatch/stream"
)

func init() {
	commands["serve"] = command{"run everything on one machine: embedded NATS JetStream, one worker and the HTTP API", runServe}
	commands["nats-server"] = command{"run a standalone NATS server with JetStream (for tests and trials)", runNATSServer}
}

func runServe(args []string) int {
	fs := flag.NewFlagSet("serve", flag.ContinueOnError)
	var wf workerFlags
	wf.register(fs)
	listen := fs.String("nats-listen", "127.0.0.1:4222", "client address of the embedded NATS server (port 0: any free port)")
	if err := fs.Parse(args); err != nil {
		return 2
	}
	if wf.data == "" {
		fmt.Fprintln(os.Stderr, "orbitwatch serve: --data DIR is required")
		return 2
	}
	state := filepath.Join(wf.data, "state")
	srv, err := stream.StartEmbedded(stream.EmbeddedOptions{StoreDir: filepath.Join(wf.data, "nats"), Listen: *listen})
	if err != nil {
		return fail("serve", err)
	}
	defer srv.Shutdown()
	fmt.Printf("orbitwatch serve: NATS %s\n", srv.URL())
	nf := natsFlags{url: srv.URL()}
	nc, err := nf.connect("serve")
	if err != nil {
		return fail("serve", err)
	}
	defer nc.Close()
	wf.data = state
	return runShard("serve", nc, &wf, shard.WorkerConfig{Shard: 0, Shards: 1, Replicas: 1}, nil)
}

// runNATSServer runs the embedded server on its own until SIGINT or
// SIGTERM, for tests that restart the server under running workers.
func runNATSServer(args []string) int {
	fs := flag.NewFlagSet("nats-server", flag.ContinueOnError)
	store := fs.String("store", "", "JetStream store directory")
	listen := fs.String("listen", "127.0.0.1:4222", "client address")
	if err := fs.Parse(args); err != nil {
		return 2
	}
	if *store == "" {
		fmt.Fprintln(os.Stderr, "orbitwatch nats-server: --store DIR is required")
		return 2
	}
	srv, err := stream.StartEmbedded(stream.EmbeddedOptions{StoreDir: *store, Listen: *listen})
	if err != nil {
		return fail("nats-server", err)
	}
	fmt.Printf("orbitwatch nats-server: NATS %s\n", srv.URL())
	ctx, cancel := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	defer cancel()
	<-ctx.Done()
	srv.Shutdown()
	return 0
}
