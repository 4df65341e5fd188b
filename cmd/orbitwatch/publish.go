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
	"strconv"
	"syscall"

	"github.com/nats-io/nats.go/jetstream"

	"orbitwatch/internal/progress"
	"orbitwatch/shard"
	"orbitwatch/stream"
)

func init() {
	commands["publish"] = command{"publish edge logs to the event stream, idempotently (event ids)", runPublish}
}

func runPublish(args []string) int {
	fs := flag.NewFlagSet("publish", flag.ContinueOnError)
	var inf inputFlags
	var nf natsFlags
	inf.register(fs)
	nf.register(fs)
	subject := fs.String("subject", shard.DefaultSubject, "subject of the event log")
	name := fs.String("stream", shard.DefaultStream, "JetStream stream of the event log (created when absent)")
	replicas := fs.Int("replicas", 1, "replicas of the stream when it is created here: 1, or 3 in a cluster")
	asJSON := fs.Bool("json", false, "publish the JSON form instead of the compact binary one")
	if err := fs.Parse(args); err != nil {
		return 2
	}
	if len(inf.inputs) == 0 {
		fmt.Fprintln(os.Stderr, "orbitwatch publish: --input FILE is required")
		return 2
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
	p := &publisher{flags: &inf, pub: stream.NewPublisher(js, *subject, stream.PublisherOptions{JSON: *asJSON, Stream: *name})}
	var total int64
	for _, path := range inf.inputs {
		total += sizeOf(path)
	}
	p.progress = progress.New(os.Stderr, total, "publish")
	runErr := p.run(ctx)
	p.progress.Done()
	st := p.pub.Stats()
	fmt.Fprintf(os.Stderr, "orbitwatch publish: %d events read, %d stored, %d duplicates (already in the stream), %d bad lines; stream %s at seq %d\n",
		p.events, st.Stored, st.Duplicates, p.bad, *name, st.LastSeq)
	if runErr != nil {
		return exitCode("publish", runErr)
	}
	return 0
}

// publisher reads edge logs and publishes their events in order.
type publisher struct {
	flags     *inputFlags
	pub       *stream.Publisher
	progress  *progress.Reporter
	rejectOut *csv.Writer
	events    int
	bad       int
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
		if err := p.file(ctx, path); err != nil {
			// What was sent is acknowledged (or refused) before stopping.
			return errors.Join(err, p.pub.Flush(context.Background()))
		}
	}
	if err := p.pub.Flush(ctx); err != nil {
		return err
	}
	if p.rejectOut != nil {
		p.rejectOut.Flush()
		return p.rejectOut.Error()
	}
	return nil
}

func (p *publisher) file(ctx context.Context, path string) error {
	r, err := stream.Open(path, p.flags.options())
	if err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	defer r.Close()
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
		switch {
		case errors.As(err, &le):
			p.bad++
			if p.rejectOut != nil {
				p.rejectOut.Write([]string{path, strconv.Itoa(le.Line), le.Reason, string(le.Raw)})
			}
			if p.flags.strict {
				return fmt.Errorf("%w: %s line %d: %s", errStrict, path, le.Line, le.Reason)
			}
		case err != nil:
			return fmt.Errorf("%s: %w", path, err)
		default:
			if err := p.pub.Publish(ctx, ev); err != nil {
				return fmt.Errorf("%s line %d: %w", path, ev.Line, err)
			}
			p.events++
			p.progress.Add(1, 0)
		}
	}
}
