// Command livebench measures live ingest end to end on this machine: events
// published to an embedded NATS JetStream server, applied by 1 or more
// in-process shard workers (4-node undirected counting), and visible at a
// complete cut. It prints a Markdown table of sustained events/s (publishing
// as fast as the publisher goes) and of publish → visible latency p50/p99 at
// a fixed offered rate.
//
//	go run ./bench/cmd/livebench -households 20000 -churn 200000 -workers 1,2 -rate 50000
//
// The stream is the generated payments scenario of bench/gen: every edge
// added (the throughput phase), then remove/re-add pairs of random edges
// (the latency phase).
package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"runtime/pprof"
	"slices"
	"strconv"
	"strings"
	"sync"
	"time"

	"github.com/nats-io/nats.go"
	"github.com/nats-io/nats.go/jetstream"

	"orbitwatch/bench/gen"
	"orbitwatch/delta"
	"orbitwatch/shard"
	"orbitwatch/storage"
	"orbitwatch/stream"
)

func main() {
	households := flag.Int("households", 20000, "households of the payments scenario")
	churn := flag.Int("churn", 100000, "remove/re-add pairs in the latency phase")
	workers := flag.String("workers", "1,2", "comma-separated worker counts to measure")
	rate := flag.Int("rate", 50000, "offered events/s in the latency phase")
	batch := flag.Uint64("batch", shard.DefaultBatch, "log positions per batch")
	idle := flag.Duration("idle", shard.DefaultIdle, "idle time before shard 0 cuts a partly filled batch")
	seed := flag.Uint64("seed", 1, "random seed")
	profile := flag.String("cpuprofile", "", "write a CPU profile of the measured runs to this file")
	flag.Parse()
	if *profile != "" {
		f, err := os.Create(*profile)
		if err != nil {
			fail(err)
		}
		if err := pprof.StartCPUProfile(f); err != nil {
			fail(err)
		}
		defer pprof.StopCPUProfile()
	}
	pop, edges := gen.Payments(gen.DefaultPayments(*households), *seed)
	grow := events(pop, gen.Grow(edges, 1_770_000_000), "g")
	ch := events(pop, gen.Churn(edges, *churn, 0, 1_780_000_000, *seed), "c")
	fmt.Fprintf(os.Stderr, "livebench: %d nodes, %d edges; %d grow events, %d churn events\n", pop.Nodes(), len(edges), len(grow), len(ch))

	fmt.Println("| workers | phase | events | events/s | p50 visible | p99 visible |")
	fmt.Println("| ---: | --- | ---: | ---: | ---: | ---: |")
	for _, ph := range []struct {
		name string
		evs  []stream.Event
	}{{"grow", grow}, {"churn", ch}} {
		perSec, err := applierOnly(ph.evs, grow, ph.name == "churn")
		if err != nil {
			fail(err)
		}
		fmt.Printf("| – | %s, applier alone (no bus, no store) | %d | %.0f | – | – |\n", ph.name, len(ph.evs), perSec)
	}
	for _, f := range strings.Split(*workers, ",") {
		n, err := strconv.Atoi(f)
		if err != nil || n < 1 {
			fail(fmt.Errorf("-workers %q", *workers))
		}
		res, err := measure(n, *batch, *idle, grow, ch, *rate)
		if err != nil {
			fail(err)
		}
		for _, r := range res {
			fmt.Printf("| %d | %s | %d | %.0f | %s | %s |\n", n, r.phase, r.events, r.perSec, ms(r.p50), ms(r.p99))
		}
	}
}

// applierOnly times one applier over evs (after applying before untimed,
// when warm), as the ceiling the bus and the cuts are measured against.
func applierOnly(evs, before []stream.Event, warm bool) (float64, error) {
	c, err := shard.NewCounting(delta.Undirected, 4)
	if err != nil {
		return 0, err
	}
	a := shard.NewApplier(c, 0)
	seq := uint64(0)
	if warm {
		for _, e := range before {
			seq++
			if err := a.Apply(seq, e); err != nil {
				return 0, err
			}
		}
	}
	start := time.Now()
	for _, e := range evs {
		seq++
		if err := a.Apply(seq, e); err != nil {
			return 0, err
		}
	}
	return float64(len(evs)) / time.Since(start).Seconds(), nil
}

func fail(err error) {
	fmt.Fprintln(os.Stderr, "livebench:", err)
	os.Exit(1)
}

func ms(d time.Duration) string {
	if d < 0 {
		return "–"
	}
	return fmt.Sprintf("%.1f ms", float64(d)/1e6)
}

func events(pop gen.Population, in []gen.Event, prefix string) []stream.Event {
	out := make([]stream.Event, len(in))
	for i, e := range in {
		op := stream.OpAdd
		if e.Op == gen.Remove {
			op = stream.OpRemove
		}
		out[i] = stream.Event{ID: prefix + strconv.Itoa(i), TS: time.Unix(e.Unix, 0).UTC(), HasTS: true, Op: op,
			Src: string(pop.AppendName(nil, e.U)), Dst: string(pop.AppendName(nil, e.V))}
	}
	return out
}

type result struct {
	phase    string
	events   int
	perSec   float64
	p50, p99 time.Duration
}

// measure runs one deployment of n workers through both phases.
func measure(n int, batch uint64, idle time.Duration, grow, churn []stream.Event, rate int) ([]result, error) {
	dir, err := os.MkdirTemp("", "livebench-")
	if err != nil {
		return nil, err
	}
	defer os.RemoveAll(dir)
	srv, err := stream.StartEmbedded(stream.EmbeddedOptions{StoreDir: filepath.Join(dir, "nats")})
	if err != nil {
		return nil, err
	}
	defer srv.Shutdown()
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	var ws []*shard.Worker
	var wg sync.WaitGroup
	errs := make(chan error, n)
	for i := range n {
		c, err := shard.NewCounting(delta.Undirected, 4)
		if err != nil {
			return nil, err
		}
		nc, err := nats.Connect(srv.URL())
		if err != nil {
			return nil, err
		}
		defer nc.Close()
		st, err := storage.Open(filepath.Join(dir, fmt.Sprint("shard-", i)), storage.Settings{Kind: delta.Undirected, MaxNodes: 4, NumOrbits: c.Catalog.NumOrbits()})
		if err != nil {
			return nil, err
		}
		defer st.Close()
		w, err := shard.NewWorker(shard.WorkerConfig{Conn: nc, Shard: i, Shards: n, Batch: batch, Idle: idle, Counting: c, Store: st})
		if err != nil {
			return nil, err
		}
		ws = append(ws, w)
		wg.Add(1)
		go func() {
			defer wg.Done()
			if err := w.Run(ctx); err != nil {
				errs <- err
			}
		}()
	}
	defer wg.Wait()
	defer cancel()

	nc, err := nats.Connect(srv.URL())
	if err != nil {
		return nil, err
	}
	defer nc.Close()
	js, err := jetstream.New(nc, jetstream.WithPublishAsyncMaxPending(8192))
	if err != nil {
		return nil, err
	}
	if _, err := stream.EnsureStream(ctx, js, shard.DefaultStream, shard.DefaultSubject, 1); err != nil {
		return nil, err
	}
	var out []result
	for _, ph := range []struct {
		name   string
		events []stream.Event
		rate   int
	}{{"grow, as fast as published", grow, 0}, {fmt.Sprintf("churn, offered %d/s", rate), churn, rate}} {
		r, err := phase(ctx, js, ws, ph.events, ph.rate, errs)
		if err != nil {
			return nil, err
		}
		r.phase = ph.name
		out = append(out, r)
	}
	return out, nil
}

// phase publishes evs at rate (0: flat out) and returns events/s from the
// first publish to the last event visible at a cut on every worker, and
// the publish → visible latencies.
func phase(ctx context.Context, js jetstream.JetStream, ws []*shard.Worker, evs []stream.Event, rate int, errs <-chan error) (result, error) {
	sent := make([]time.Time, len(evs))
	seqs := make([]uint64, len(evs))
	type visible struct {
		cut uint64
		at  time.Time
	}
	var cuts []visible
	stopPoll := make(chan struct{})
	polled := make(chan struct{})
	go func() {
		defer close(polled)
		var last uint64
		for {
			c := uint64(math.MaxUint64)
			for _, w := range ws {
				c = min(c, w.Status().CutSeq)
			}
			if c != last {
				cuts = append(cuts, visible{c, time.Now()})
				last = c
			}
			select {
			case <-stopPoll:
				return
			case <-time.After(200 * time.Microsecond):
			}
		}
	}()

	acks := make(chan struct {
		i   int
		fut jetstream.PubAckFuture
	}, 16384)
	ackErr := make(chan error, 1)
	go func() {
		var first error
		for a := range acks {
			select {
			case ack := <-a.fut.Ok():
				seqs[a.i] = ack.Sequence
			case err := <-a.fut.Err():
				if first == nil {
					first = err
				}
			}
		}
		ackErr <- first
	}()
	start := time.Now()
	var buf []byte
	for i, e := range evs {
		if rate > 0 && i%16 == 0 {
			if ahead := time.Duration(i)*time.Second/time.Duration(rate) - time.Since(start); ahead > 0 {
				time.Sleep(ahead)
			}
		}
		buf = stream.EncodeBinary(buf[:0], e)
		sent[i] = time.Now()
		fut, err := js.PublishAsync(shard.DefaultSubject, slices.Clone(buf), jetstream.WithMsgID(e.ID))
		if err != nil {
			return result{}, err
		}
		acks <- struct {
			i   int
			fut jetstream.PubAckFuture
		}{i, fut}
	}
	close(acks)
	if err := <-ackErr; err != nil {
		return result{}, fmt.Errorf("publish: %w", err)
	}
	last := slices.Max(seqs)
	deadline := time.Now().Add(10 * time.Minute)
	for {
		c := uint64(math.MaxUint64)
		for _, w := range ws {
			c = min(c, w.Status().CutSeq)
		}
		if c >= last {
			break
		}
		select {
		case err := <-errs:
			return result{}, err
		case <-time.After(time.Millisecond):
		}
		if time.Now().After(deadline) {
			return result{}, errors.New("the cut did not reach the last event in 10 minutes")
		}
	}
	close(stopPoll)
	<-polled
	end := cuts[len(cuts)-1].at
	lat := make([]time.Duration, len(evs))
	for i, s := range seqs {
		k, _ := slices.BinarySearchFunc(cuts, s, func(v visible, s uint64) int {
			if v.cut < s {
				return -1
			}
			if v.cut > s {
				return 1
			}
			return 0
		})
		lat[i] = cuts[k].at.Sub(sent[i])
	}
	slices.Sort(lat)
	return result{events: len(evs), perSec: float64(len(evs)) / end.Sub(start).Seconds(),
		p50: lat[len(lat)/2], p99: lat[len(lat)*99/100]}, nil
}
