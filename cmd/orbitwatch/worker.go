package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"net"
	"net/http"
	"os"
	"os/signal"
	"strings"
	"syscall"
	"time"

	"github.com/nats-io/nats.go"

	"orbitwatch/shard"
	"orbitwatch/shard/api"
	"orbitwatch/storage"
)

func init() {
	commands["worker"] = command{"run one shard of a deployment against an external NATS JetStream server or cluster", runWorker}
}

// natsFlags are the flags of the commands that connect to a NATS server.
type natsFlags struct {
	url, creds, ca, cert, key string
}

func (f *natsFlags) register(fs *flag.FlagSet) {
	fs.StringVar(&f.url, "nats", "", "NATS server URL(s), comma-separated, e.g. nats://10.0.0.1:4222")
	fs.StringVar(&f.creds, "creds", "", "NATS credentials file (JWT and seed)")
	fs.StringVar(&f.ca, "tls-ca", "", "PEM file of the CA that signed the server certificates")
	fs.StringVar(&f.cert, "tls-cert", "", "PEM client certificate for TLS client authentication (with --tls-key)")
	fs.StringVar(&f.key, "tls-key", "", "PEM private key of --tls-cert")
}

// connect dials the server with reconnects that never give up, so that a
// server restart or a cluster fail-over only pauses the command.
func (f *natsFlags) connect(name string) (*nats.Conn, error) {
	if f.url == "" {
		return nil, errors.New("--nats URL is required")
	}
	opts := []nats.Option{nats.Name("orbitwatch " + name), nats.MaxReconnects(-1), nats.ReconnectWait(250 * time.Millisecond)}
	if f.creds != "" {
		opts = append(opts, nats.UserCredentials(f.creds))
	}
	if f.ca != "" {
		opts = append(opts, nats.RootCAs(f.ca))
	}
	if (f.cert == "") != (f.key == "") {
		return nil, errors.New("--tls-cert and --tls-key go together")
	}
	if f.cert != "" {
		opts = append(opts, nats.ClientCert(f.cert, f.key))
	}
	nc, err := nats.Connect(f.url, opts...)
	if err != nil {
		return nil, fmt.Errorf("connect to %s: %w", f.url, err)
	}
	return nc, nil
}

// workerFlags are the flags serve and worker share.
type workerFlags struct {
	counting countingFlags
	data     string
	http     string
	window   string
	stream   string
	subject  string
	deploy   string
	cuts     cutFlags
	peers    string
	alerts   alertFlags
}

func (f *workerFlags) register(fs *flag.FlagSet) {
	f.counting.register(fs)
	fs.StringVar(&f.data, "data", "", "data directory (created when missing)")
	fs.StringVar(&f.http, "http", "127.0.0.1:7474", "address of the HTTP API; empty for none")
	fs.StringVar(&f.window, "window", "", "event-time window after which an add expires, e.g. 30d or 12h (default: none)")
	fs.StringVar(&f.stream, "stream", shard.DefaultStream, "JetStream stream of the event log")
	fs.StringVar(&f.subject, "subject", shard.DefaultSubject, "subject of the event log")
	fs.StringVar(&f.deploy, "deployment", "", "name of this set of workers (its rejects stream); default: the stream name")
	f.cuts.register(fs)
	f.alerts.register(fs)
	fs.StringVar(&f.peers, "peers", "", "comma-separated base URLs of every shard's HTTP API, in shard order (for the status of all shards)")
}

func runWorker(args []string) int {
	fs := flag.NewFlagSet("worker", flag.ContinueOnError)
	var wf workerFlags
	var nf natsFlags
	wf.register(fs)
	nf.register(fs)
	shardFlag := fs.Int("shard", -1, "this worker's shard, 0 ≤ shard < shards")
	shards := fs.Int("shards", 0, "the number of workers that share the alert scoring (each applies the whole log)")
	replicas := fs.Int("replicas", 1, "replicas of the streams created when absent: 1, or 3 in a cluster")
	if err := fs.Parse(args); err != nil {
		return 2
	}
	if wf.data == "" || *shards < 1 || *shardFlag < 0 || *shardFlag >= *shards {
		fmt.Fprintln(os.Stderr, "orbitwatch worker: --data DIR, --shards N ≥ 1 and --shard i with 0 ≤ i < N are required")
		return 2
	}
	if *replicas != 1 && *replicas != 3 {
		fmt.Fprintln(os.Stderr, "orbitwatch worker: --replicas is 1 or 3")
		return 2
	}
	nc, err := nf.connect("worker")
	if err != nil {
		return fail("worker", err)
	}
	defer nc.Close()
	return runShard("worker", nc, &wf, shard.WorkerConfig{Shard: *shardFlag, Shards: *shards, Replicas: *replicas}, nil)
}

// runShard runs one worker with its HTTP API until SIGINT or SIGTERM and
// returns the exit code. ready, when set, is called once the API listens.
func runShard(name string, nc *nats.Conn, wf *workerFlags, cfg shard.WorkerConfig, ready func(httpURL string)) int {
	window, err := parseDays(wf.window)
	if err != nil {
		return fail(name, fmt.Errorf("--window: %w", err))
	}
	c, err := wf.counting.counting()
	if err != nil {
		return fail(name, err)
	}
	st, err := storage.Open(wf.data, storage.Settings{Kind: c.Catalog.Kind, MaxNodes: c.Catalog.MaxNodes, NumOrbits: c.Catalog.NumOrbits(), Window: window})
	if err != nil {
		return fail(name, err)
	}
	defer st.Close()
	cfg.Conn, cfg.Stream, cfg.Subject, cfg.Cuts = nc, wf.stream, wf.subject, wf.cuts.cuts()
	cfg.Counting, cfg.Window, cfg.Store, cfg.Deployment = c, window, st, wf.deploy
	cfg.Logf = func(format string, args ...any) {
		fmt.Fprintf(os.Stderr, "orbitwatch %s: shard %d: %s\n", name, cfg.Shard, fmt.Sprintf(format, args...))
	}
	if cfg.Alerts, cfg.Webhook, err = wf.alerts.setup(c.Catalog); err != nil {
		return fail(name, err)
	}
	if cfg.Webhook != nil {
		defer func() {
			wctx, wcancel := context.WithTimeout(context.Background(), 5*time.Second)
			cfg.Webhook.Close(wctx)
			wcancel()
		}()
	}
	w, err := shard.NewWorker(cfg)
	if err != nil {
		return fail(name, err)
	}
	ctx, cancel := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	defer cancel()

	var srv *http.Server
	httpURL := ""
	if wf.http != "" {
		ln, err := net.Listen("tcp", wf.http)
		if err != nil {
			return fail(name, fmt.Errorf("--http: %w", err))
		}
		var peers []string
		if wf.peers != "" {
			peers = strings.Split(wf.peers, ",")
		}
		srv = &http.Server{Handler: api.New(w, api.Options{Peers: peers}), ReadHeaderTimeout: 10 * time.Second}
		go srv.Serve(ln)
		httpURL = "http://" + ln.Addr().String()
		fmt.Printf("orbitwatch %s: HTTP API %s\n", name, httpURL)
	}
	if ready != nil {
		ready(httpURL)
	}
	runErr := w.Run(ctx)
	if srv != nil {
		sctx, scancel := context.WithTimeout(context.Background(), 5*time.Second)
		srv.Shutdown(sctx)
		scancel()
	}
	stat := w.Status()
	fmt.Fprintf(os.Stderr, "orbitwatch %s: shard %d of %d stopped with the cut at %d durable (log read to %d, %d applied)\n", name, stat.Shard, stat.Shards, stat.CommittedSeq, stat.AppliedSeq, stat.Applied)
	if runErr != nil {
		return fail(name, runErr)
	}
	return 0
}
