package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"time"

	"github.com/nats-io/nats.go"
	"github.com/nats-io/nats.go/jetstream"

	"orbitwatch/bench/demo"
	"orbitwatch/delta"
	"orbitwatch/shard"
	"orbitwatch/stream"
)

func init() {
	commands["demo"] = command{"play a fictional payments network with planted patterns through an embedded server and show the alerts on a web page", runDemo}
}

// demoCutEvery is the demo's cut spacing in event time: its payments are
// ten seconds apart, so a cut holds about six of them and an alert comes
// at most a minute of event time after the payment that made it.
const demoCutEvery = time.Minute

func runDemo(args []string) int {
	fs := flag.NewFlagSet("demo", flag.ContinueOnError)
	data := fs.String("data", "", "data `DIR` to keep (default: a temporary one, removed on exit); the offline commands read it with --data DIR")
	httpAddr := fs.String("http", "127.0.0.1:7474", "address of the web page and the HTTP API")
	rate := fs.Float64("rate", 100, "steady payments per second of wall time after the opening (which goes as fast as it can)")
	seed := fs.Uint64("seed", 1, "seed of the scenario")
	webhook := fs.String("webhook", "", "URL to POST every alert to as JSON, with retries (never holds up counting)")
	small := fs.Bool("small", false, "a smaller scenario (600 households, five simulated hours) for quick trials and tests")
	var cf countingFlags
	fs.StringVar(&cf.kind, "kind", "directed", "graph kind counted: directed (who pays whom: cycles of funds, pass-through, fan-in, fan-out), undirected (rings, cliques) or signed (payments and disputes)")
	fs.IntVar(&cf.maxNodes, "max-nodes", 0, "largest graphlet size counted (default 3, for undirected 4; directed 4 also finds cycles of four accounts)")
	if code := parseFlags(fs, args); code != 0 {
		return code
	}
	if *rate <= 0 {
		fmt.Fprintln(os.Stderr, "orbitwatch demo: --rate must be positive")
		return 2
	}
	if cf.maxNodes == 0 {
		cf.maxNodes = 3
		if cf.kind == "undirected" {
			cf.maxNodes = 4
		}
	}
	counting, err := cf.counting()
	if err != nil {
		return fail("demo", err)
	}
	if counting.Catalog.Kind == delta.Undirected && cf.maxNodes < 4 {
		return fail("demo", usagef("--max-nodes: the undirected demo rules need graphlets of 4 nodes"))
	}
	dir := *data
	if dir == "" {
		tmp, err := os.MkdirTemp("", "orbitwatch-demo-")
		if err != nil {
			return fail("demo", err)
		}
		defer os.RemoveAll(tmp)
		dir = tmp
	}
	cfg := demo.DefaultConfig()
	if *small {
		cfg = demo.SmallConfig()
	}
	cfg.Seed = *seed
	sc := demo.Generate(cfg)

	// As serve: the embedded server admits only the holder of the key
	// made in DATA/nats-user.nk.
	srv, err := stream.StartEmbedded(stream.EmbeddedOptions{StoreDir: filepath.Join(dir, "nats"), Listen: "127.0.0.1:0", NKeyFile: filepath.Join(dir, natsKeyFile)})
	if err != nil {
		return fail("demo", err)
	}
	defer srv.Shutdown()
	fmt.Printf("orbitwatch demo: NATS %s\n", srv.URL())
	fmt.Printf("orbitwatch demo: its clients authenticate with --nkey %s\n", srv.NKeyFile())
	nf := natsFlags{url: srv.URL(), nkey: srv.NKeyFile()}
	nc, err := nf.connect("demo")
	if err != nil {
		return fail("demo", err)
	}
	defer nc.Close()
	wf := workerFlags{data: filepath.Join(dir, "state"), http: *httpAddr, stream: shard.DefaultStream, subject: shard.DefaultSubject,
		cuts: cutFlags{every: demoCutEvery}}
	wf.counting = cf
	// The undirected demo runs its own rules file; the directed and signed
	// ones the built-in rules (demo.AlertConfig).
	wf.alerts.webhook = *webhook
	if counting.Catalog.Kind == delta.Undirected {
		wf.alerts.yaml = demo.AlertsYAML
	}

	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	played := make(chan error, 1)
	ready := func(httpURL string) {
		fmt.Print(demoIntro(sc, counting.Catalog.Kind, cf.maxNodes, httpURL, *rate))
		go func() { played <- playDemo(ctx, nc, sc, *rate) }()
		go func() {
			err := <-played
			if err != nil {
				if ctx.Err() == nil {
					fmt.Fprintf(os.Stderr, "orbitwatch demo: publishing stopped: %v\n", err)
				}
				return
			}
			fmt.Println("orbitwatch demo: story complete; the page stays up until Ctrl-C")
		}()
	}
	return runShard("demo", nc, &wf, shard.WorkerConfig{Shard: 0, Shards: 1, Replicas: 1}, ready)
}

// demoIntro says where the page is and what to look for when counting
// kind on up to k nodes: the patterns meant for it, with the rule that is
// to find each, and the quiet ones.
func demoIntro(sc *demo.Scenario, kind delta.Kind, k int, httpURL string, rate float64) string {
	var b strings.Builder
	steady := len(sc.Events) - sc.Opening
	fmt.Fprintf(&b, "orbitwatch demo: a fictional payments network of %d households, %d shops and %d payroll providers (all names invented)\n",
		sc.Config.Households, sc.Config.Shops, sc.Config.Payrolls)
	fmt.Fprintf(&b, "orbitwatch demo: %d opening payments at once, then %d more at %.0f a second (about %.0f s)\n", sc.Opening, steady, rate, float64(steady)/rate)
	fmt.Fprintf(&b, "orbitwatch demo: counting the %v graph on 2–%d nodes; --kind undirected, directed or signed shows other patterns\n", kind, k)
	fmt.Fprintf(&b, "orbitwatch demo: open %s/ in a browser\n", httpURL)
	fmt.Fprintln(&b, "orbitwatch demo: planted, to look for (pattern, rule, accounts):")
	for _, p := range sc.Expected(kind, k) {
		if p.Quiet {
			fmt.Fprintf(&b, "  %-16s %-21s %s: %s\n", p.Name, "quiet", strings.Join(p.Nodes, " "), p.Title)
			continue
		}
		at := float64(p.CompleteIndex-sc.Opening) / rate
		rule, _ := p.FoundWith(kind, k)
		fmt.Fprintf(&b, "  %-16s %-21s %s: %s (complete about %.0f s into the steady part)\n", p.Name, rule, strings.Join(p.Expect, " "), p.Title, max(at, 0))
	}
	fmt.Fprintln(&b, "orbitwatch demo: alerts are leads for a trained investigator, not findings about people")
	return b.String()
}

// playDemo publishes the opening as fast as the server acknowledges it,
// then the rest at rate events a second of wall time.
func playDemo(ctx context.Context, nc *nats.Conn, sc *demo.Scenario, rate float64) error {
	js, err := jetstream.New(nc)
	if err != nil {
		return err
	}
	if _, err := js.Stream(ctx, shard.DefaultStream); errors.Is(err, jetstream.ErrStreamNotFound) {
		if _, err := stream.EnsureStream(ctx, js, shard.DefaultStream, shard.DefaultSubject, 1); err != nil {
			return err
		}
	} else if err != nil {
		return err
	}
	pub := stream.NewPublisher(js, shard.DefaultSubject, stream.PublisherOptions{Stream: shard.DefaultStream})
	for _, e := range sc.Events[:sc.Opening] {
		if err := pub.Publish(ctx, e); err != nil {
			return err
		}
	}
	if err := pub.Flush(ctx); err != nil {
		return err
	}
	const tick = 20 * time.Millisecond
	t := time.NewTicker(tick)
	defer t.Stop()
	start := time.Now()
	next := sc.Opening
	for next < len(sc.Events) {
		select {
		case <-ctx.Done():
			return ctx.Err()
		case now := <-t.C:
			due := sc.Opening + int(now.Sub(start).Seconds()*rate)
			for ; next < min(due, len(sc.Events)); next++ {
				if err := pub.Publish(ctx, sc.Events[next]); err != nil {
					return err
				}
			}
			if err := pub.Flush(ctx); err != nil {
				return err
			}
		}
	}
	return nil
}
