package main

import (
	"context"
	"flag"
	"fmt"
	"os"
	"os/signal"
	"path/filepath"
	"syscall"
	"time"

	"orbitwatch/delta/catalog"
	"orbitwatch/shard"
	"orbitwatch/shard/alert"
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
	listen := fs.String("nats-listen", "127.0.0.1:4222", "client address of the embedded NATS server (port 0: any free port); it admits holders of DATA/"+natsKeyFile+" only")
	if code := parseFlags(fs, args); code != 0 {
		return code
	}
	if code := wf.checkAPI("serve"); code != 0 {
		return code
	}
	state := filepath.Join(wf.data, storeDir)
	// The key is made on first start and kept beside the stores: publish
	// and worker reach this server with --nkey DATA/nats-user.nk.
	srv, err := stream.StartEmbedded(stream.EmbeddedOptions{StoreDir: filepath.Join(wf.data, "nats"), Listen: *listen, NKeyFile: filepath.Join(wf.data, natsKeyFile)})
	if err != nil {
		return fail("serve", err)
	}
	defer srv.Shutdown()
	fmt.Printf("orbitwatch serve: NATS %s\n", srv.URL())
	fmt.Printf("orbitwatch serve: its clients authenticate with --nkey %s\n", srv.NKeyFile())
	nf := natsFlags{url: srv.URL(), nkey: srv.NKeyFile()}
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
	store := fs.String("store", "", "JetStream store `DIR`")
	listen := fs.String("listen", "127.0.0.1:4222", "client address (beyond loopback only with --nkey)")
	nkey := fs.String("nkey", "", "admit only holders of the NATS user nkey in this seed file, made (0600) when missing; default: anyone on loopback")
	if code := parseFlags(fs, args); code != 0 {
		return code
	}
	srv, err := stream.StartEmbedded(stream.EmbeddedOptions{StoreDir: *store, Listen: *listen, NKeyFile: *nkey})
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

// alertFlags are the alert flags of serve, worker and demo.
type alertFlags struct {
	path, webhook string
	// yaml, when set (by demo), is the rules file's content instead of
	// path's.
	yaml []byte
}

func (f *alertFlags) register(fs *flag.FlagSet) {
	fs.StringVar(&f.path, "alerts", "", "alert rules file (YAML); default: the built-in rules")
	fs.StringVar(&f.webhook, "webhook", "", "URL to POST every alert to as JSON, with retries (never holds up counting)")
}

// setup returns the evaluator of the rules (the built-in ones when no
// file is given) and the webhook when one is asked for; the caller closes
// the webhook after the worker stops.
func (f *alertFlags) setup(cat *catalog.Catalog) (*alert.Evaluator, *alert.Webhook, error) {
	cfg := alert.DefaultConfig(cat)
	var err error
	switch {
	case f.yaml != nil:
		cfg, err = alert.ParseConfig(f.yaml, cat)
	case f.path != "":
		cfg, err = alert.LoadConfig(f.path, cat)
	}
	if err != nil {
		return nil, nil, fmt.Errorf("--alerts: %w", err)
	}
	var hook *alert.Webhook
	if f.webhook != "" {
		hook, err = alert.NewWebhook(alert.WebhookConfig{URL: f.webhook, Timeout: 5 * time.Second})
		if err != nil {
			return nil, nil, fmt.Errorf("--webhook: %w", err)
		}
	}
	return alert.New(cfg, cat), hook, nil
}
