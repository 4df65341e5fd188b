package stream

import (
	"context"
	"errors"
	"fmt"
	"slices"
	"strings"
	"time"

	"github.com/nats-io/nats.go/jetstream"
)

// DefaultDuplicateWindow is how long the server remembers message ids to
// drop a republished event. It bounds how late a republish of the same
// file is still caught; the server keeps one id per message of the window.
const DefaultDuplicateWindow = time.Hour

// EnsureStream creates the file-backed stream name on subject with the
// given replicas and DefaultDuplicateWindow, or returns it when it exists
// with that configuration. A stream of that name with other subjects,
// replicas or duplicate window is an error (it is not changed).
// Precondition: replicas ≥ 1.
func EnsureStream(ctx context.Context, js jetstream.JetStream, name, subject string, replicas int) (jetstream.Stream, error) {
	if replicas < 1 {
		panic("stream: EnsureStream: replicas must be at least 1")
	}
	cfg := jetstream.StreamConfig{
		Name:       name,
		Subjects:   []string{subject},
		Storage:    jetstream.FileStorage,
		Retention:  jetstream.LimitsPolicy,
		Replicas:   replicas,
		Duplicates: DefaultDuplicateWindow,
	}
	s, err := js.CreateStream(ctx, cfg)
	if err == nil {
		return s, nil
	}
	if !errors.Is(err, jetstream.ErrStreamNameAlreadyInUse) {
		return nil, fmt.Errorf("stream: create stream %s: %w", name, err)
	}
	s, err = js.Stream(ctx, name)
	if err != nil {
		return nil, fmt.Errorf("stream: stream %s: %w", name, err)
	}
	have := s.CachedInfo().Config
	if !slices.Equal(have.Subjects, cfg.Subjects) || have.Replicas != cfg.Replicas || have.Duplicates != cfg.Duplicates {
		return nil, fmt.Errorf("stream: stream %s exists with subjects %v, replicas %d, duplicate window %v; want %v, %d, %v",
			name, have.Subjects, have.Replicas, have.Duplicates, cfg.Subjects, cfg.Replicas, cfg.Duplicates)
	}
	return s, nil
}

// PublisherOptions configures a Publisher.
type PublisherOptions struct {
	// JSON publishes the JSON form instead of the binary one.
	JSON bool
	// Stream, when set, makes the server reject a message whose subject
	// is not stored in this stream.
	Stream string
	// MaxPending is how many publishes may await their ack; at that many
	// Publish first waits for the oldest. 0 means 1024. The client's own
	// limit (jetstream.WithPublishAsyncMaxPending, 4000 by default) must
	// not be lower.
	MaxPending int
}

// PublishStats counts acknowledged publishes.
type PublishStats struct {
	// Stored is the number of events the stream stored.
	Stored int
	// Duplicates is the number of events the server dropped as already
	// stored within the duplicate window (same event id).
	Duplicates int
	// LastSeq is the highest stream sequence acknowledged.
	LastSeq uint64
	// Interleaved counts the times an OrderedPublisher found another
	// writer's message between its events and went on after it.
	Interleaved int
}

// Publisher publishes events asynchronously with their id as the
// Nats-Msg-Id, so that the server stores each id within the duplicate
// window once. It does not keep the order of the events across a lost
// connection (events the client held are stored after a gap): to store a
// log in its order or not at all, use OrderedPublisher. It is not safe for
// concurrent use.
type Publisher struct {
	js      jetstream.JetStream
	subject string
	opts    PublisherOptions
	// pending[head:] await their acks, oldest first.
	pending []pendingAck
	head    int
	stats   PublishStats
}

type pendingAck struct {
	id  string
	fut jetstream.PubAckFuture
}

// NewPublisher returns a Publisher to subject.
func NewPublisher(js jetstream.JetStream, subject string, opts PublisherOptions) *Publisher {
	if opts.MaxPending <= 0 {
		opts.MaxPending = 1024
	}
	return &Publisher{js: js, subject: subject, opts: opts}
}

// Publish sends e without waiting for its ack, except that with
// MaxPending acks outstanding it first waits for the oldest. It returns
// the server's reject of that oldest event, if any (naming its id). An
// event without an id, one CheckEvent refuses, or one the JSON form
// cannot carry, is an error and is not sent.
func (p *Publisher) Publish(ctx context.Context, e Event) error {
	data, err := encodeForPublish(e, p.opts.JSON)
	if err != nil {
		return err
	}
	popts := []jetstream.PublishOpt{jetstream.WithMsgID(e.ID)}
	if p.opts.Stream != "" {
		popts = append(popts, jetstream.WithExpectStream(p.opts.Stream))
	}
	fut, err := p.js.PublishAsync(p.subject, data, popts...)
	if err != nil {
		return fmt.Errorf("stream: publish event %s: %w", e.ID, err)
	}
	if p.head > 0 && p.head >= len(p.pending)/2 {
		n := copy(p.pending, p.pending[p.head:])
		clear(p.pending[n:])
		p.pending, p.head = p.pending[:n], 0
	}
	p.pending = append(p.pending, pendingAck{id: e.ID, fut: fut})
	if len(p.pending)-p.head >= p.opts.MaxPending {
		return p.awaitOldest(ctx)
	}
	return nil
}

// awaitOldest waits for the ack of the oldest outstanding publish and
// counts it; on ctx done it returns ctx.Err() and leaves it outstanding.
func (p *Publisher) awaitOldest(ctx context.Context) error {
	pa := p.pending[p.head]
	select {
	case ack := <-pa.fut.Ok():
		if ack.Duplicate {
			p.stats.Duplicates++
		} else {
			p.stats.Stored++
		}
		p.stats.LastSeq = max(p.stats.LastSeq, ack.Sequence)
	case err := <-pa.fut.Err():
		err = fmt.Errorf("stream: publish event %s: %w", pa.id, err)
		p.pending[p.head] = pendingAck{}
		p.head++
		return err
	case <-ctx.Done():
		return ctx.Err()
	}
	p.pending[p.head] = pendingAck{}
	p.head++
	return nil
}

// Flush waits for the acks of all events published so far. It returns the
// server's rejects, each naming its event id, joined; acked events count
// in Stats either way.
func (p *Publisher) Flush(ctx context.Context) error {
	var errs []error
	for p.head < len(p.pending) {
		if err := p.awaitOldest(ctx); err != nil {
			errs = append(errs, err)
			if ctx.Err() != nil {
				break
			}
		}
	}
	if p.head == len(p.pending) {
		p.pending, p.head = p.pending[:0], 0
	}
	return errors.Join(errs...)
}

// Stats returns the counts of acknowledged publishes.
func (p *Publisher) Stats() PublishStats { return p.stats }

// MessageError is a stream message that does not decode to an event. The
// consumer goes on with the next message on the following Next call.
type MessageError struct {
	// Seq is the stream sequence of the message.
	Seq uint64
	Err error
}

func (e *MessageError) Error() string {
	return fmt.Sprintf("message %d: %v", e.Seq, e.Err)
}

func (e *MessageError) Unwrap() error { return e.Err }

// Consumer reads a stream in order from a start sequence, through an
// ordered consumer (no acks, recreated by the client after a gap).
type Consumer struct {
	it      jetstream.MessagesContext
	pending uint64
}

// NewConsumer starts reading stream name at stream sequence startSeq (0
// and 1 both mean the first message). To resume after the last applied
// sequence s, pass s+1.
func NewConsumer(ctx context.Context, js jetstream.JetStream, name string, startSeq uint64) (*Consumer, error) {
	cfg := jetstream.OrderedConsumerConfig{DeliverPolicy: jetstream.DeliverAllPolicy}
	if startSeq > 1 {
		cfg.DeliverPolicy, cfg.OptStartSeq = jetstream.DeliverByStartSequencePolicy, startSeq
	}
	oc, err := js.OrderedConsumer(ctx, name, cfg)
	if err != nil {
		return nil, fmt.Errorf("stream: consumer on %s: %w", name, err)
	}
	it, err := oc.Messages()
	if err != nil {
		return nil, fmt.Errorf("stream: consumer on %s: %w", name, err)
	}
	return &Consumer{it: it}, nil
}

// Next waits for the next message and returns its stream sequence and
// event, with ev.Line set to the sequence and ev.ID, when the message has
// none, taken from its Nats-Msg-Id. A message that does not decode gives a
// *MessageError (with its sequence) and the consumer goes on; any other
// error (ctx done, connection closed) is from the transport.
func (c *Consumer) Next(ctx context.Context) (uint64, Event, error) {
	msg, err := c.it.Next(jetstream.NextContext(ctx))
	if err != nil {
		return 0, Event{}, fmt.Errorf("stream: consume: %w", err)
	}
	md, err := msg.Metadata()
	if err != nil {
		return 0, Event{}, fmt.Errorf("stream: consume: %w", err)
	}
	seq := md.Sequence.Stream
	c.pending = md.NumPending
	ev, err := DecodeMessage(msg.Data())
	if err != nil {
		return seq, Event{}, &MessageError{Seq: seq, Err: err}
	}
	ev.Line = int(seq)
	if ev.ID == "" {
		ev.ID = msg.Headers().Get(jetstream.MsgIDHeader)
	}
	return seq, ev, nil
}

// Pending is the number of messages in the stream after the last one
// returned by Next, as the server said with it; 0 means caught up then.
func (c *Consumer) Pending() uint64 { return c.pending }

// Close stops the consumer.
func (c *Consumer) Close() { c.it.Stop() }

// encodeForPublish checks e and returns its bus message in a new buffer
// (the client keeps it for retries).
func encodeForPublish(e Event, asJSON bool) ([]byte, error) {
	if e.ID == "" {
		return nil, fmt.Errorf("stream: publish: event at line %d has no id", e.FileLine)
	}
	if err := CheckEvent(e); err != nil {
		return nil, fmt.Errorf("stream: publish: event at line %d: %s", e.FileLine, strings.TrimPrefix(err.Error(), "stream: "))
	}
	if asJSON {
		return EncodeJSON(nil, e)
	}
	return EncodeBinary(nil, e), nil
}
