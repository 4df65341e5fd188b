package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"net/url"
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
	url, creds, nkey, ca, cert, key string
}

func (f *natsFlags) register(fs *flag.FlagSet) {
	fs.StringVar(&f.url, "nats", "", "NATS server `URL`, or several comma-separated, e.g. nats://10.0.0.1:4222")
	fs.StringVar(&f.creds, "creds", "", "NATS credentials file (JWT and seed)")
	fs.StringVar(&f.nkey, "nkey", "", "NATS user nkey seed file: DATA/"+natsKeyFile+" for the server of `serve --data DATA`, or a key an external server admits")
	fs.StringVar(&f.ca, "tls-ca", "", "PEM file of the CA that signed the server certificates")
	fs.StringVar(&f.cert, "tls-cert", "", "PEM client certificate for TLS client authentication (with --tls-key)")
	fs.StringVar(&f.key, "tls-key", "", "PEM private key of --tls-cert")
}

// natsKeyFile is the name, in a serve data directory, of the NATS user
// nkey seed its embedded server admits.
const natsKeyFile = "nats-user.nk"

// connect dials the server with reconnects that never give up, so that a
// server restart or a cluster fail-over only pauses the command.
func (f *natsFlags) connect(name string) (*nats.Conn, error) {
	if f.url == "" {
		return nil, errors.New("--nats URL is required")
	}
	opts := []nats.Option{nats.Name("orbitwatch " + name), nats.MaxReconnects(-1), nats.ReconnectWait(250 * time.Millisecond)}
	if f.creds != "" && f.nkey != "" {
		return nil, errors.New("--creds and --nkey: give one of them")
	}
	if f.creds != "" {
		opts = append(opts, nats.UserCredentials(f.creds))
	}
	if f.nkey != "" {
		opt, err := nats.NkeyOptionFromSeed(f.nkey)
		if err != nil {
			return nil, fmt.Errorf("--nkey %s: %w", f.nkey, err)
		}
		opts = append(opts, opt)
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
	if errors.Is(err, nats.ErrAuthorization) {
		return nil, fmt.Errorf("connect to %s: %w (the server admits holders of a credential: --nkey DATA/%s for the server of serve --data DATA, else --creds or --nkey as its operator says)", f.url, err, natsKeyFile)
	}
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
	window   spanFlag
	keep     spanFlag
	stream   string
	subject  string
	deploy   string
	cuts     cutFlags
	peers    string
	alerts   alertFlags
	// api says whom the HTTP API at http admits.
	api apiFlags
}

func (f *workerFlags) register(fs *flag.FlagSet) {
	f.counting.register(fs)
	fs.StringVar(&f.data, "data", "", "data `DIR` (created when missing)")
	fs.StringVar(&f.http, "http", "127.0.0.1:7474", "address of the HTTP API; empty for none")
	fs.Var(&f.window, "window", "event-time window after which an add expires, e.g. 30d or 12h (default: none)")
	registerKeepHistory(fs, &f.keep)
	fs.StringVar(&f.stream, "stream", shard.DefaultStream, "JetStream stream of the event log")
	fs.StringVar(&f.subject, "subject", shard.DefaultSubject, "subject of the event log")
	fs.StringVar(&f.deploy, "deployment", "", "name of this set of workers (its rejects stream); default: the stream name")
	f.cuts.register(fs)
	f.alerts.register(fs)
	fs.StringVar(&f.peers, "peers", "", "comma-separated base URLs of every shard's HTTP API, in shard order (for the status and the alerts of all shards); their host names are admitted in the Host header")
	f.api.register(fs)
}

// openAPI opens the HTTP API's listener, or says why not and returns the
// exit code: 2 for a setup that needs a credential to listen where asked,
// 1 for files that do not load or an address that does not listen.
func (f *workerFlags) openAPI(name string, peers []string) (*api.Server, int) {
	srv, err := f.api.listen(f.http, peers)
	if errors.Is(err, api.ErrNoCredential) {
		fmt.Fprintf(os.Stderr, "orbitwatch %s: --http %s: %v\n"+
			"orbitwatch %s: give --http-tokens FILE, or --http-client-ca FILE with --http-cert and --http-key, or listen on 127.0.0.1 (README: Security)\n", name, f.http, err, name)
		return nil, 2
	}
	if err != nil {
		return nil, fail(name, fmt.Errorf("--http %s: %w", f.http, err))
	}
	return srv, 0
}

// checkAPI opens and closes the HTTP API's listener, so that serve and
// worker refuse a setup that cannot listen before they start or connect
// to anything; it returns 0 when the setup is fine, else the exit code.
func (f *workerFlags) checkAPI(name string) int {
	if f.http == "" {
		return 0
	}
	var peers []string
	if f.peers != "" {
		peers = strings.Split(f.peers, ",")
	}
	srv, code := f.openAPI(name, peers)
	if srv != nil {
		srv.Shutdown(context.Background())
	}
	return code
}

// apiFlags say whom the HTTP API admits (README, Security).
type apiFlags struct {
	tokens, cert, key, clientCA, hosts, peerToken string
}

func (f *apiFlags) register(fs *flag.FlagSet) {
	fs.StringVar(&f.tokens, "http-tokens", "", "file of bearer tokens (and client certificate names) with their roles, read or admin; needed, or --http-client-ca, to listen beyond loopback")
	fs.StringVar(&f.cert, "http-cert", "", "PEM certificate chain: serve the API over HTTPS (with --http-key)")
	fs.StringVar(&f.key, "http-key", "", "PEM private key of --http-cert")
	fs.StringVar(&f.clientCA, "http-client-ca", "", "PEM CA: admit clients with a TLS certificate it signed (read role; admin as --http-tokens lists cert:NAME)")
	fs.StringVar(&f.hosts, "http-host", "", "comma-separated host names the API answers to, besides IP addresses, localhost and the --peers hosts (a defence against DNS rebinding)")
	fs.StringVar(&f.peerToken, "peer-token", "", "file holding the bearer token this worker shows its --peers")
}

// listen opens the API's listener as the flags say, adding the peers'
// host names to those admitted.
func (f *apiFlags) listen(addr string, peers []string) (*api.Server, error) {
	cfg := api.ServerConfig{Addr: addr, TokensFile: f.tokens, CertFile: f.cert, KeyFile: f.key, ClientCAFile: f.clientCA}
	for _, h := range strings.Split(f.hosts, ",") {
		if h = strings.TrimSpace(h); h != "" {
			cfg.Hosts = append(cfg.Hosts, h)
		}
	}
	for _, p := range peers {
		u, err := url.Parse(p)
		if err != nil || u.Hostname() == "" {
			return nil, fmt.Errorf("--peers: %q is not a base URL like http://host:7474", p)
		}
		cfg.Hosts = append(cfg.Hosts, u.Hostname())
	}
	return api.Listen(cfg)
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
	if code := parseFlags(fs, args); code != 0 {
		return code
	}
	if *shards < 1 || *shardFlag < 0 || *shardFlag >= *shards {
		return fail("worker", usagef("--shards N ≥ 1 and --shard i with 0 ≤ i < N are required (given --shard %d --shards %d)", *shardFlag, *shards))
	}
	if *replicas != 1 && *replicas != 3 {
		return fail("worker", usagef("--replicas is 1 or 3, not %d", *replicas))
	}
	if code := wf.checkAPI("worker"); code != 0 {
		return code
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
	// The API's listener comes first, so that a refusal to listen beyond
	// loopback stops the command before it reads anything.
	var srv *api.Server
	var peers []string
	if wf.peers != "" {
		peers = strings.Split(wf.peers, ",")
	}
	var peerToken string
	if wf.api.peerToken != "" {
		var err error
		if peerToken, err = api.ReadToken(wf.api.peerToken); err != nil {
			return fail(name, fmt.Errorf("--peer-token: %w", err))
		}
	}
	stopHTTP := func() {}
	defer func() { stopHTTP() }()
	if wf.http != "" {
		var code int
		if srv, code = wf.openAPI(name, peers); srv == nil {
			return code
		}
		stopHTTP = func() {
			sctx, scancel := context.WithTimeout(context.Background(), 5*time.Second)
			srv.Shutdown(sctx)
			scancel()
			stopHTTP = func() {}
		}
		if srv.ClearTokensBeyondLoopback() {
			fmt.Fprintf(os.Stderr, "orbitwatch %s: warning: bearer tokens cross the network in clear over plain HTTP on %s; serve HTTPS (--http-cert, --http-key) or put a TLS proxy in front\n", name, wf.http)
		}
	}
	window := wf.window.d
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
	cfg.KeepHistory = wf.keep.d
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

	httpURL := ""
	if srv != nil {
		opts := api.Options{Peers: peers, PeerClient: srv.PeerClient(5 * time.Second), PeerToken: peerToken, Webhook: cfg.Webhook, Logf: cfg.Logf}
		if cfg.Alerts != nil {
			for _, r := range cfg.Alerts.Config().Rules {
				opts.Rules = append(opts.Rules, r.Name)
			}
		}
		go srv.Serve(api.New(w, opts))
		httpURL = srv.URL()
		fmt.Printf("orbitwatch %s: HTTP API %s\n", name, httpURL)
	}
	if ready != nil {
		ready(httpURL)
	}
	runErr := w.Run(ctx)
	// Readers stop before the store closes.
	stopHTTP()
	stat := w.Status()
	fmt.Fprintf(os.Stderr, "orbitwatch %s: shard %d of %d stopped with the cut at %d durable (log read to %d, %d applied)\n", name, stat.Shard, stat.Shards, stat.CommittedSeq, stat.AppliedSeq, stat.Applied)
	if runErr != nil {
		return fail(name, runErr)
	}
	return 0
}
