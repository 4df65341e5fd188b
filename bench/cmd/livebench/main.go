// Command livebench measures live ingest end to end with the commands a
// user runs: `orbitwatch serve` (embedded NATS JetStream, one worker with
// its default settings, the HTTP API) as a child process, fed first by
// `orbitwatch publish` with a generated log, then by churn published from
// this process at a fixed offered rate. Throughout it polls the worker's
// GET /v1/status and notes when applied_seq (the last event reads answer
// from, since reads without an as-of point come from memory) reaches each
// sequence.
//
//	go run ./bench/cmd/livebench
//	go run ./bench/cmd/livebench -nodes 20000 -churn 50000 -rates 10000,20000 -rounds 1
//
// Phase 1 (publish): the Barabási–Albert log (every edge added, one second
// of event time apart; -nodes 60000, -m 5: 299,985 events) published by
// `orbitwatch publish --nkey DATA/nats-user.nk`: publish's own wall time,
// and the time from its start until serve has applied the last event.
// Phase 2 (churn), once for each of -rates: -churn events removing and at
// once re-adding random present edges (event time going on from the log),
// offered at that many events/s: visibility, the time from an
// event's publish acknowledgement to the first status poll showing it
// applied (an upper bound, by at most -poll), at p50, p99 and max.
package main

import (
	"bufio"
	"context"
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io"
	"net/http"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"sync"
	"syscall"
	"time"

	"github.com/nats-io/nats.go"
	"github.com/nats-io/nats.go/jetstream"

	"orbitwatch/bench"
	"orbitwatch/bench/gen"
	"orbitwatch/shard"
	"orbitwatch/stream"
)

func main() {
	if err := run(os.Args[1:], os.Stdout, os.Stderr); err != nil {
		fmt.Fprintln(os.Stderr, "livebench:", err)
		os.Exit(1)
	}
}

type config struct {
	nodes, m, churn, rounds int
	rates                   []int
	seed                    uint64
	poll                    time.Duration
	serveArgs               []string
}

func run(args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("livebench", flag.ContinueOnError)
	fs.SetOutput(stderr)
	var cfg config
	fs.IntVar(&cfg.nodes, "nodes", 60000, "Barabási–Albert nodes of the published log")
	fs.IntVar(&cfg.m, "m", 5, "Barabási–Albert edges per new node")
	fs.Uint64Var(&cfg.seed, "seed", 1, "random seed")
	fs.IntVar(&cfg.churn, "churn", 200000, "churn events (remove/re-add pairs) of phase 2 (0: none)")
	rates := fs.String("rates", "50000", "offered churn events per second, one churn phase for each (comma-separated)")
	fs.IntVar(&cfg.rounds, "rounds", 2, "rounds, each with a fresh serve")
	fs.DurationVar(&cfg.poll, "poll", 5*time.Millisecond, "interval of the status polls")
	extra := fs.String("serve-args", "", "more serve flags, space-separated (e.g. \"--cut-every 10m\")")
	if err := fs.Parse(args); err != nil {
		return err
	}
	if fs.NArg() > 0 {
		return fmt.Errorf("unexpected arguments %q", fs.Args())
	}
	for _, f := range strings.Split(*rates, ",") {
		n, err := strconv.Atoi(strings.TrimSpace(f))
		if err != nil || n < 1 {
			return fmt.Errorf("-rates %q: %q is not a rate", *rates, f)
		}
		cfg.rates = append(cfg.rates, n)
	}
	if cfg.nodes <= cfg.m || cfg.m < 1 || cfg.churn < 0 || cfg.churn%2 != 0 || cfg.rounds < 1 || cfg.poll <= 0 {
		return errors.New("need -nodes > -m >= 1, an even -churn >= 0, -rounds and -poll above 0")
	}
	cfg.serveArgs = strings.Fields(*extra)
	work, err := os.MkdirTemp("", "livebench-")
	if err != nil {
		return err
	}
	defer os.RemoveAll(work)
	bin, err := bench.BuildBinary(work, stderr)
	if err != nil {
		return err
	}
	edges := gen.BarabasiAlbert(cfg.nodes, cfg.m, cfg.seed)
	start := time.Date(2026, 1, 1, 0, 0, 0, 0, time.UTC).Unix()
	grow := gen.Grow(edges, start)
	log := filepath.Join(work, "grow.csv")
	if err := writeLog(log, grow); err != nil {
		return err
	}
	// Each churn phase has its own events (ids and event times going on),
	// so that none is a duplicate and cuts keep falling as in a stream.
	var churn [][]stream.Event
	for k := range cfg.rates {
		if cfg.churn > 0 {
			from := start + int64(len(grow)+k*cfg.churn)
			churn = append(churn, bench.StreamEvents(bench.AccountNamer(0), gen.Churn(edges, cfg.churn/2, 0, from, cfg.seed+1+uint64(k)), fmt.Sprintf("churn%d-", k)))
		}
	}
	fmt.Fprintf(stderr, "livebench: BA(%d, %d): %d adds published by orbitwatch publish, then %d churn events offered at each of %v events/s\n", cfg.nodes, cfg.m, len(grow), cfg.churn, cfg.rates)

	var rows []row
	for r := 1; r <= cfg.rounds; r++ {
		got, err := round(stderr, bin, filepath.Join(work, fmt.Sprint("data-", r)), log, len(grow), churn, cfg)
		if err != nil {
			return fmt.Errorf("round %d: %w", r, err)
		}
		for i := range got {
			got[i].round = r
		}
		rows = append(rows, got...)
	}
	fmt.Fprintf(stdout, "```\ngo run ./bench/cmd/livebench %s\n```\n\n", strings.Join(args, " "))
	writeTable(stdout, rows, cfg)
	return nil
}

func writeLog(path string, evs []gen.Event) error {
	f, err := os.Create(path)
	if err != nil {
		return err
	}
	w := gen.NewLogWriter(f, bench.AccountNamer(0))
	for _, e := range evs {
		if err := w.Write(e); err != nil {
			f.Close()
			return err
		}
	}
	return errors.Join(w.Flush(), f.Close())
}

// row is one phase of one round.
type row struct {
	round               int
	phase               string
	load                string
	events              int
	published, caughtUp time.Duration // from the first publish
	// visibility from ack and from send, sorted; empty for phase 1
	fromAck, fromSend []time.Duration
	serveCPU          time.Duration // of the whole round, in the last row
}

// round starts serve on a fresh data directory, runs both phases and
// stops it.
func round(stderr io.Writer, bin, data, log string, growEvents int, churn [][]stream.Event, cfg config) ([]row, error) {
	s, err := startServe(bin, data, cfg.serveArgs, stderr)
	if err != nil {
		return nil, err
	}
	defer s.stop()
	p := newPoller(s.httpURL, cfg.poll)
	defer p.close()

	fmt.Fprintf(stderr, "livebench: publishing %s\n", log)
	one := row{phase: "publish", load: bench.LoadAverage(), events: growEvents}
	pub := exec.Command(bin, "publish", "--nats", s.natsURL, "--nkey", filepath.Join(data, "nats-user.nk"), "--input", log)
	bench.DieWithParent(pub)
	var perr strings.Builder
	pub.Stderr = &perr
	t0 := time.Now()
	if err := pub.Run(); err != nil {
		return nil, fmt.Errorf("orbitwatch publish: %v\n%s", err, perr.String())
	}
	one.published = time.Since(t0)
	sm := regexp.MustCompile(`at seq (\d+)`).FindStringSubmatch(perr.String())
	if sm == nil {
		return nil, fmt.Errorf("orbitwatch publish said no last sequence:\n%s", perr.String())
	}
	last, _ := strconv.ParseUint(sm[1], 10, 64)
	at, err := p.waitFor(last, s)
	if err != nil {
		return nil, err
	}
	one.caughtUp = at.Sub(t0)
	rows := []row{one}

	for k, evs := range churn {
		fmt.Fprintf(stderr, "livebench: churn, %d events at %d/s\n", len(evs), cfg.rates[k])
		two, err := churnPhase(s, p, data, evs, cfg.rates[k])
		if err != nil {
			return nil, err
		}
		rows = append(rows, two)
	}
	cpu, err := s.stop()
	if err != nil {
		return nil, err
	}
	rows[len(rows)-1].serveCPU = cpu
	return rows, nil
}

// churnPhase publishes evs at rate from this process, noting when each
// was sent and acknowledged and at which stream sequence, and then when
// the worker had applied it.
func churnPhase(s *serve, p *poller, data string, evs []stream.Event, rate int) (row, error) {
	r := row{phase: fmt.Sprintf("churn offered at %d/s", rate), load: bench.LoadAverage(), events: len(evs)}
	key, err := nats.NkeyOptionFromSeed(filepath.Join(data, "nats-user.nk"))
	if err != nil {
		return r, err
	}
	nc, err := nats.Connect(s.natsURL, key)
	if err != nil {
		return r, err
	}
	defer nc.Close()
	js, err := jetstream.New(nc, jetstream.WithPublishAsyncMaxPending(8192))
	if err != nil {
		return r, err
	}
	sent := make([]time.Time, len(evs))
	acked := make([]time.Time, len(evs))
	seqs := make([]uint64, len(evs))
	type pending struct {
		i   int
		fut jetstream.PubAckFuture
	}
	futures := make(chan pending, 16384)
	ackErr := make(chan error, 1)
	go func() {
		var first error
		for f := range futures {
			select {
			case ack := <-f.fut.Ok():
				acked[f.i], seqs[f.i] = time.Now(), ack.Sequence
			case err := <-f.fut.Err():
				if first == nil {
					first = fmt.Errorf("event %d: %w", f.i, err)
				}
			}
		}
		ackErr <- first
	}()
	t0 := time.Now()
	var buf []byte
	for i, e := range evs {
		if i%16 == 0 {
			if ahead := time.Duration(i)*time.Second/time.Duration(rate) - time.Since(t0); ahead > 0 {
				time.Sleep(ahead)
			}
		}
		if js.PublishAsyncPending() >= 4096 {
			<-js.PublishAsyncComplete()
		}
		buf = stream.EncodeBinary(buf[:0], e)
		sent[i] = time.Now()
		fut, err := js.PublishAsync(shard.DefaultSubject, slices.Clone(buf), jetstream.WithMsgID(e.ID))
		if err != nil {
			close(futures)
			return r, err
		}
		futures <- pending{i, fut}
	}
	close(futures)
	if err := <-ackErr; err != nil {
		return r, fmt.Errorf("publish: %w", err)
	}
	r.published = time.Since(t0)
	at, err := p.waitFor(slices.Max(seqs), s)
	if err != nil {
		return r, err
	}
	r.caughtUp = at.Sub(t0)
	for i, seq := range seqs {
		v := p.visibleAt(seq)
		r.fromAck = append(r.fromAck, v.Sub(acked[i]))
		r.fromSend = append(r.fromSend, v.Sub(sent[i]))
	}
	slices.Sort(r.fromAck)
	slices.Sort(r.fromSend)
	return r, nil
}

// serve is a running `orbitwatch serve`.
type serve struct {
	cmd              *exec.Cmd
	natsURL, httpURL string
	done             chan error
	stopped          bool
}

func startServe(bin, data string, extra []string, stderr io.Writer) (*serve, error) {
	args := append([]string{"serve", "--data", data, "--nats-listen", "127.0.0.1:0", "--http", "127.0.0.1:0"}, extra...)
	cmd := exec.Command(bin, args...)
	bench.DieWithParent(cmd)
	cmd.Stderr = stderr
	out, err := cmd.StdoutPipe()
	if err != nil {
		return nil, err
	}
	if err := cmd.Start(); err != nil {
		return nil, err
	}
	s := &serve{cmd: cmd, done: make(chan error, 1)}
	urls := make(chan [2]string, 1)
	go func() {
		sc := bufio.NewScanner(out)
		var u [2]string
		for sc.Scan() {
			line := sc.Text()
			if v, ok := strings.CutPrefix(line, "orbitwatch serve: NATS "); ok {
				u[0] = v
			}
			if v, ok := strings.CutPrefix(line, "orbitwatch serve: HTTP API "); ok {
				u[1] = v
				urls <- u
			}
		}
		io.Copy(io.Discard, out)
		s.done <- cmd.Wait()
	}()
	select {
	case u := <-urls:
		s.natsURL, s.httpURL = u[0], u[1]
	case err := <-s.done:
		return nil, fmt.Errorf("orbitwatch serve ended before serving: %v", err)
	case <-time.After(60 * time.Second):
		s.stop()
		return nil, errors.New("orbitwatch serve printed no URLs in 60 s")
	}
	if s.natsURL == "" {
		s.stop()
		return nil, errors.New("orbitwatch serve printed no NATS URL")
	}
	return s, nil
}

// stop interrupts serve (it takes a last cut), waits, and returns the CPU
// time it used.
func (s *serve) stop() (time.Duration, error) {
	if s.stopped {
		return 0, nil
	}
	s.stopped = true
	s.cmd.Process.Signal(os.Interrupt)
	select {
	case err := <-s.done:
		if err != nil {
			return 0, fmt.Errorf("orbitwatch serve: %w", err)
		}
	case <-time.After(2 * time.Minute):
		s.cmd.Process.Kill()
		<-s.done
		return 0, errors.New("orbitwatch serve did not stop within 2 minutes of an interrupt")
	}
	ru := s.cmd.ProcessState.SysUsage().(*syscall.Rusage)
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano()), nil
}

// poller reads GET /v1/status?local=true every interval and keeps each
// change of applied_seq with the time it was first seen.
type poller struct {
	url    string
	mu     sync.Mutex
	seen   []visible
	cancel context.CancelFunc
	wg     sync.WaitGroup
	err    error
}

type visible struct {
	seq uint64
	at  time.Time
}

type status struct {
	Shards []struct {
		AppliedSeq uint64 `json:"applied_seq"`
	} `json:"shards"`
}

func newPoller(base string, every time.Duration) *poller {
	ctx, cancel := context.WithCancel(context.Background())
	p := &poller{url: strings.TrimSuffix(base, "/") + "/v1/status?local=true", cancel: cancel}
	p.wg.Add(1)
	go func() {
		defer p.wg.Done()
		client := &http.Client{Timeout: 10 * time.Second}
		tick := time.NewTicker(every)
		defer tick.Stop()
		for {
			seq, err := p.read(ctx, client)
			now := time.Now()
			p.mu.Lock()
			if err != nil && ctx.Err() == nil {
				p.err = err
			}
			if err == nil && (len(p.seen) == 0 || seq > p.seen[len(p.seen)-1].seq) {
				p.seen = append(p.seen, visible{seq, now})
			}
			p.mu.Unlock()
			select {
			case <-ctx.Done():
				return
			case <-tick.C:
			}
		}
	}()
	return p
}

func (p *poller) read(ctx context.Context, client *http.Client) (uint64, error) {
	req, err := http.NewRequestWithContext(ctx, http.MethodGet, p.url, nil)
	if err != nil {
		return 0, err
	}
	resp, err := client.Do(req)
	if err != nil {
		return 0, err
	}
	defer resp.Body.Close()
	var st status
	if err := json.NewDecoder(resp.Body).Decode(&st); err != nil {
		return 0, fmt.Errorf("GET %s: %w", p.url, err)
	}
	if resp.StatusCode != http.StatusOK || len(st.Shards) == 0 {
		return 0, fmt.Errorf("GET %s: %s", p.url, resp.Status)
	}
	return st.Shards[0].AppliedSeq, nil
}

// waitFor returns when a poll first showed applied_seq ≥ seq, waiting up
// to ten minutes.
func (p *poller) waitFor(seq uint64, s *serve) (time.Time, error) {
	deadline := time.Now().Add(10 * time.Minute)
	for time.Now().Before(deadline) {
		p.mu.Lock()
		n, err := len(p.seen), p.err
		var top visible
		if n > 0 {
			top = p.seen[n-1]
		}
		p.mu.Unlock()
		if n > 0 && top.seq >= seq {
			return p.visibleAt(seq), nil
		}
		select {
		case e := <-s.done:
			s.stopped = true
			return time.Time{}, fmt.Errorf("orbitwatch serve ended: %v (last poll error: %v)", e, err)
		case <-time.After(10 * time.Millisecond):
		}
	}
	return time.Time{}, fmt.Errorf("applied_seq did not reach %d in 10 minutes", seq)
}

// visibleAt returns when a poll first showed applied_seq ≥ seq; seq must
// have been seen.
func (p *poller) visibleAt(seq uint64) time.Time {
	p.mu.Lock()
	defer p.mu.Unlock()
	i, _ := slices.BinarySearchFunc(p.seen, seq, func(v visible, s uint64) int {
		if v.seq < s {
			return -1
		}
		if v.seq > s {
			return 1
		}
		return 0
	})
	return p.seen[i].at
}

func (p *poller) close() {
	p.cancel()
	p.wg.Wait()
}

func ms(d time.Duration) string { return fmt.Sprintf("%.0f ms", float64(d)/1e6) }

func quantile(d []time.Duration, q float64) time.Duration {
	return d[min(len(d)-1, int(q*float64(len(d))))]
}

func writeTable(w io.Writer, rows []row, cfg config) {
	fmt.Fprintf(w, "serve (one worker, default settings), the publisher and the status polls (every %v) on the same machine.\n\n", cfg.poll)
	fmt.Fprintln(w, "| round | phase | load | events | published in s | applied by serve in s | applied / published | events/s applied | visible after ack p50 / p99 / max | after send p99 | serve CPU s (round) |")
	fmt.Fprintln(w, "| ---: | --- | ---: | ---: | ---: | ---: | ---: | ---: | --- | ---: | ---: |")
	for _, r := range rows {
		vis, send := "–", "–"
		if len(r.fromAck) > 0 {
			vis = fmt.Sprintf("%s / %s / %s", ms(quantile(r.fromAck, 0.5)), ms(quantile(r.fromAck, 0.99)), ms(r.fromAck[len(r.fromAck)-1]))
			send = ms(quantile(r.fromSend, 0.99))
		}
		cpu := ""
		if r.serveCPU > 0 {
			cpu = fmt.Sprintf("%.1f", r.serveCPU.Seconds())
		}
		fmt.Fprintf(w, "| %d | %s | %s | %d | %.2f | %.2f | %.2f× | %.0f | %s | %s | %s |\n", r.round, r.phase, r.load, r.events,
			r.published.Seconds(), r.caughtUp.Seconds(), r.caughtUp.Seconds()/r.published.Seconds(), float64(r.events)/r.caughtUp.Seconds(), vis, send, cpu)
	}
	fmt.Fprintln(w)
}
