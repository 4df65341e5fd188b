package main

import (
	"context"
	"encoding/csv"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"os/signal"
	"syscall"
	"time"

	"github.com/nats-io/nats.go/jetstream"

	"orbitwatch/internal/progress"
	"orbitwatch/shard"
	"orbitwatch/stream"
)

func init() {
	commands["publish"] = command{"publish edge logs to the event stream, in order and once (event ids and a publish manifest)", runPublish}
}

func runPublish(args []string) int {
	fs := flag.NewFlagSet("publish", flag.ContinueOnError)
	var inf inputFlags
	var nf natsFlags
	inf.register(fs)
	nf.register(fs)
	subject := fs.String("subject", shard.DefaultSubject, "subject of the event log")
	name := fs.String("stream", shard.DefaultStream, "JetStream stream of the event log (created when absent)")
	replicas := fs.Int("replicas", 1, "replicas of the stream and of the manifest bucket when they are created here: 1, or 3 in a cluster")
	asJSON := fs.Bool("json", false, "publish the JSON form instead of the compact binary one")
	manifest := fs.String("manifest", stream.DefaultManifestBucket, "key-value bucket recording how far each log is published, so that a log published again is stored once at any time; empty: rely on event ids within the stream's duplicate window")
	if code := parseFlags(fs, args); code != 0 {
		return code
	}
	if err := inf.check(); err != nil {
		return fail("publish", err)
	}
	nc, err := nf.connect("publish")
	if err != nil {
		return fail("publish", err)
	}
	defer nc.Close()
	js, err := jetstream.New(nc)
	if err != nil {
		return fail("publish", err)
	}
	ctx, cancel := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	defer cancel()
	if _, err := js.Stream(ctx, *name); errors.Is(err, jetstream.ErrStreamNotFound) {
		_, err = stream.EnsureStream(ctx, js, *name, *subject, *replicas)
		if err != nil {
			return fail("publish", err)
		}
	} else if err != nil {
		return fail("publish", fmt.Errorf("stream %s: %w", *name, err))
	}
	var man *stream.Manifest
	if *manifest != "" {
		if man, err = stream.OpenManifest(ctx, js, *manifest, *replicas); err != nil {
			return fail("publish", err)
		}
	}
	lp, err := stream.NewLogPublisher(ctx, js, *name, *subject, man, stream.OrderedOptions{JSON: *asJSON})
	if err != nil {
		return fail("publish", err)
	}
	p := &publisher{flags: &inf, lp: lp}
	var total int64
	for _, path := range inf.inputs {
		total += sizeOf(path)
	}
	p.progress = progress.New(os.Stderr, total, "publish")
	runErr := p.run(ctx)
	p.progress.Done()
	st := lp.Stats()
	last := st.LastSeq
	if nc.IsConnected() {
		ictx, icancel := context.WithTimeout(context.Background(), 5*time.Second)
		if s, err := js.Stream(ictx, *name); err == nil {
			last = s.CachedInfo().State.LastSeq
		}
		icancel()
	}
	fmt.Fprintf(os.Stderr, "orbitwatch publish: %d events read, %d stored, %d duplicates (already in the stream), %d bad lines, %d filtered, %d lines read; stream %s at seq %d\n",
		p.events, st.Stored, st.Duplicates, p.counts.rejected, p.counts.filtered, p.counts.read, *name, last)
	p.counts.printDetails()
	var stop *stream.PublishStopError
	if errors.As(runErr, &stop) {
		fmt.Fprintf(os.Stderr, "orbitwatch publish: %s: %v\norbitwatch publish: every event before line %d is stored in order; run the same command again to go on from there\n",
			p.path, stop, stop.FileLine)
		return 1
	}
	if runErr != nil {
		return fail("publish", runErr)
	}
	return 0
}

// publisher reads edge logs and publishes their events in order.
type publisher struct {
	flags     *inputFlags
	lp        *stream.LogPublisher
	progress  *progress.Reporter
	rejectOut *csv.Writer
	counts    lineCounts
	events    int
	// path is the input being published.
	path string
}

func (p *publisher) run(ctx context.Context) error {
	if p.flags.rejects != "" {
		f, err := os.Create(p.flags.rejects)
		if err != nil {
			return err
		}
		defer f.Close()
		p.rejectOut = csv.NewWriter(f)
		p.rejectOut.Write([]string{"input", "line", "reason", "raw"})
		defer p.rejectOut.Flush()
	}
	for _, path := range p.flags.inputs {
		p.path = path
		p.lp.Begin(path)
		err := p.file(ctx, path)
		// What was sent is acknowledged (or refused) and recorded before
		// going on or stopping.
		if err := errors.Join(err, p.lp.End(context.WithoutCancel(ctx))); err != nil {
			return err
		}
	}
	if p.rejectOut != nil {
		p.rejectOut.Flush()
		return p.rejectOut.Error()
	}
	return nil
}

func (p *publisher) file(ctx context.Context, path string) error {
	r, err := p.flags.open(path)
	if err != nil {
		return err
	}
	defer r.Close()
	defer func() {
		p.counts.read += uint64(r.Lines())
		p.counts.noteUnused(r)
	}()
	var offset int64
	for n := 0; ; n++ {
		if n%4096 == 0 {
			o := r.Offset()
			p.progress.Add(0, o-offset)
			offset = o
			if err := ctx.Err(); err != nil {
				return err
			}
		}
		ev, err := r.Next()
		if err == io.EOF {
			p.progress.Add(0, r.Offset()-offset)
			return nil
		}
		var le *stream.LineError
		var fe *stream.FilteredError
		switch {
		case errors.As(err, &le):
			p.counts.reject(le.Reason)
			if err := writeReject(p.rejectOut, p.flags.strict, path, le.FileLine, le.Reason, le.Raw); err != nil {
				return err
			}
		case errors.As(err, &fe):
			p.counts.filter(fe.Reason)
		case err != nil:
			return badInput(fmt.Errorf("%s: %w", path, err))
		default:
			if err := p.lp.Event(ctx, ev); err != nil {
				return err
			}
			p.events++
			p.progress.Add(1, 0)
		}
	}
}
