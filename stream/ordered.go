package stream

import (
	"context"
	"errors"
	"fmt"
	"slices"
	"time"

	"github.com/nats-io/nats.go"
	"github.com/nats-io/nats.go/jetstream"
)

// OrderedPublisher publishes events so that the stream stores them in the
// order given, each once, or stops. Every publish carries the stream
// sequence it expects to follow (Nats-Expected-Last-Sequence) and, once
// this publisher has stored an event, the id of the message it expects to
// follow (Nats-Expected-Last-Msg-Id), besides its own event id
// (Nats-Msg-Id). So the server refuses an event once one before it went
// missing, or once another publisher's message came between, and nothing
// is ever stored after a gap.
//
// Publishes are pipelined: each one's expected sequence assumes that the
// events in flight are stored, or, after a duplicate, that they are
// duplicates too. When the server answers otherwise, or another writer's
// message (a worker's control message, another log) comes between, the
// events in flight after it are refused, which the server guarantees
// leaves them unstored; once none is in flight they are sent again, in
// order, with expectations that hold (after another writer, from the
// stream's new last sequence). The window of events in flight then starts
// at one and doubles with every prediction that holds, so a log whose
// events alternate between new and stored costs one round trip per event,
// not one window. Other writers' messages may so fall between this log's
// events, never an event of this log out of its order.
//
// A publish is never retried in any other case and nothing is held for a
// reconnect: on a lost connection, any other refusal or a missing
// acknowledgement the publisher stops, and Flush and Publish return a
// *PublishStopError naming the first event not acknowledged. Acked tells
// how far the log is stored. It is not safe for concurrent use.
type OrderedPublisher struct {
	js      jetstream.JetStream
	stream  string
	subject string
	opts    OrderedOptions

	// queue holds the events not yet settled, oldest first: queue[0] is
	// the first event not acknowledged. Those before queue[sendFrom] have
	// been sent; those from it on are sent in order as the window allows.
	queue    []*inflight
	sendFrom int
	inFlight int
	window   int
	// next is the expected last sequence of the next publish and nextID
	// the id of the message there, "" when this publisher did not store
	// it; dupMode is the predicted outcome of those in flight.
	next    uint64
	nextID  string
	dupMode bool
	// resyncing: a prediction failed, so the events in flight after it are
	// refused; they are sent again once none is in flight. interleaved:
	// another writer's message came between, so the stream's last
	// sequence must be asked for first.
	resyncing   bool
	interleaved bool
	// chain is the stream's last sequence after the events acknowledged
	// in order, and chainID the id of the message there when known.
	chain   uint64
	chainID string
	acked   AckPoint
	stats   PublishStats
	// fault is the first failure; deadline bounds the wait for the events
	// in flight after it.
	fault    error
	deadline time.Time
	timer    *time.Timer
}

// OrderedOptions configures an OrderedPublisher.
type OrderedOptions struct {
	// JSON publishes the JSON form instead of the binary one.
	JSON bool
	// MaxPending is how many publishes may await their ack; 0 means 1024.
	MaxPending int
	// AckTimeout is how long an acknowledgement may take before the
	// publisher stops; 0 means 30 s.
	AckTimeout time.Duration
}

// AckPoint is the last event of the longest prefix of the published
// events that the stream acknowledged, in order.
type AckPoint struct {
	Line, FileLine int
	ID             string
	// Seq is the stream's last sequence after it: the next event, if
	// stored, is at Seq+1.
	Seq uint64
}

// PublishStopError says where an OrderedPublisher stopped: every event
// before the one named is stored (or was a duplicate), in order; the one
// named and those after it may or may not be, and none is stored out of
// order.
type PublishStopError struct {
	// Line, FileLine and ID are those of the first event not acknowledged.
	Line, FileLine int
	ID             string
	Err            error
}

func (e *PublishStopError) Error() string {
	return fmt.Sprintf("stopped at line %d (event %s), the first event not acknowledged: %v", e.FileLine, e.ID, e.Err)
}

func (e *PublishStopError) Unwrap() error { return e.Err }

type inflight struct {
	line, fileLine int
	id             string
	data           []byte
	expect         uint64
	expectID       string
	predictDup     bool
	fut            jetstream.PubAckFuture
	state          int
}

// errCodeWrongLastMsgID is JetStream's JSStreamWrongLastMsgIDErr, which
// nats.go names no constant for (nats-server errors.json, code 10070).
const errCodeWrongLastMsgID jetstream.ErrorCode = 10070

// States of an inflight event.
const (
	unsent = iota // new, or refused on a failed prediction: to send
	sent
	acked
	failed
)

// NewOrderedPublisher returns a publisher to subject of the stream name,
// whose last sequence is now lastSeq (from the stream's info).
func NewOrderedPublisher(js jetstream.JetStream, name, subject string, lastSeq uint64, opts OrderedOptions) *OrderedPublisher {
	if opts.MaxPending <= 0 {
		opts.MaxPending = 1024
	}
	if opts.AckTimeout <= 0 {
		opts.AckTimeout = 30 * time.Second
	}
	t := time.NewTimer(time.Hour)
	t.Stop()
	return &OrderedPublisher{js: js, stream: name, subject: subject, opts: opts, window: opts.MaxPending, next: lastSeq, chain: lastSeq,
		acked: AckPoint{Seq: lastSeq}, timer: t}
}

// Publish queues e and sends what the window allows, first waiting while
// MaxPending events are unsettled. An event CheckEvent refuses, or
// without an id, is an error and is not sent; the publisher goes on.
// After a stop it returns the *PublishStopError.
func (p *OrderedPublisher) Publish(ctx context.Context, e Event) error {
	if p.fault != nil {
		return p.settle(ctx)
	}
	data, err := encodeForPublish(e, p.opts.JSON)
	if err != nil {
		return err
	}
	p.queue = append(p.queue, &inflight{line: e.Line, fileLine: e.FileLine, id: e.ID, data: data})
	p.pump()
	for p.fault == nil && len(p.queue) >= p.opts.MaxPending {
		if err := p.step(ctx); err != nil {
			return err
		}
	}
	if p.fault != nil {
		return p.settle(ctx)
	}
	return nil
}

// Flush waits until every event published is acknowledged, or returns the
// *PublishStopError (or ctx's error, the events staying in flight).
func (p *OrderedPublisher) Flush(ctx context.Context) error { return p.settle(ctx) }

// settle steps until the queue is empty or, after a fault, nothing is in
// flight; then it returns nil or the stop error.
func (p *OrderedPublisher) settle(ctx context.Context) error {
	for len(p.queue) > 0 && !(p.fault != nil && p.inFlight == 0) {
		if err := p.step(ctx); err != nil {
			return err
		}
	}
	if p.fault == nil {
		return nil
	}
	if len(p.queue) == 0 {
		// Every event was acknowledged after all: nothing to stop for.
		return p.fault
	}
	f := p.queue[0]
	return &PublishStopError{Line: f.line, FileLine: f.fileLine, ID: f.id, Err: p.fault}
}

// pump sends queued events in order while the window has room, unless a
// failed prediction is still being drained or the publisher stopped.
func (p *OrderedPublisher) pump() {
	for p.sendFrom < len(p.queue) && p.inFlight < p.window && !p.resyncing && p.fault == nil {
		f := p.queue[p.sendFrom]
		p.sendFrom++
		if f.state == unsent {
			p.send(f)
		}
	}
}

// step waits for the oldest event in flight and settles it, or, with
// none in flight, ends a resync; then it sends what it can.
func (p *OrderedPublisher) step(ctx context.Context) error {
	if p.inFlight == 0 {
		if p.interleaved && p.fault == nil {
			p.interleaved = false
			if err := p.rebase(ctx); err != nil {
				return err
			}
		}
		if p.resyncing && p.fault == nil {
			p.resyncing, p.next, p.nextID = false, p.chain, p.chainID
		}
		p.pop()
		p.pump()
		if p.inFlight == 0 && p.fault == nil && len(p.queue) > 0 {
			panic("stream: OrderedPublisher has events queued and none it can send")
		}
		return nil
	}
	var f *inflight
	for _, q := range p.queue {
		if q.state == sent {
			f = q
			break
		}
	}
	wait := p.opts.AckTimeout
	if p.fault != nil {
		wait = max(0, time.Until(p.deadline))
	}
	p.timer.Reset(wait)
	defer p.timer.Stop()
	select {
	case ack := <-f.fut.Ok():
		p.onAck(f, ack)
	case err := <-f.fut.Err():
		p.onErr(f, err)
	case <-p.timer.C:
		if p.fault != nil {
			// Past the deadline after a fault: what is still in flight
			// stays unknown.
			for _, q := range p.queue {
				if q.state == sent {
					q.state = failed
					p.inFlight--
				}
			}
			return nil
		}
		p.onErr(f, fmt.Errorf("no acknowledgement within %v", p.opts.AckTimeout))
	case <-ctx.Done():
		return ctx.Err()
	}
	p.pop()
	p.pump()
	return nil
}

// send publishes f with the expected last sequence and message id of the
// current prediction. It does not send when the connection is not up, so
// that the client never holds a publish for a reconnect.
func (p *OrderedPublisher) send(f *inflight) {
	if st := p.js.Conn().Status(); st != nats.CONNECTED {
		f.state = failed
		p.fail(fmt.Errorf("not connected to the server (%v)", st))
		return
	}
	f.expect, f.expectID, f.predictDup = p.next, p.nextID, p.dupMode
	opts := []jetstream.PublishOpt{jetstream.WithMsgID(f.id), jetstream.WithExpectLastSequence(f.expect), jetstream.WithRetryAttempts(0)}
	if f.expectID != "" {
		opts = append(opts, jetstream.WithExpectLastMsgID(f.expectID))
	}
	fut, err := p.js.PublishAsync(p.subject, f.data, opts...)
	if err != nil {
		f.state = failed
		p.fail(err)
		return
	}
	f.fut, f.state = fut, sent
	p.inFlight++
	if !p.dupMode {
		p.next, p.nextID = p.next+1, f.id
	}
}

func (p *OrderedPublisher) onAck(f *inflight, ack *jetstream.PubAck) {
	p.inFlight--
	f.state = acked
	p.stats.LastSeq = max(p.stats.LastSeq, ack.Sequence)
	if ack.Duplicate {
		p.stats.Duplicates++
	} else {
		p.stats.Stored++
		if ack.Sequence != p.chain+1 && p.fault == nil {
			p.fail(fmt.Errorf("event %s stored at stream sequence %d where %d was expected", f.id, ack.Sequence, p.chain+1))
		}
		p.chain, p.chainID = ack.Sequence, f.id
	}
	switch {
	case p.resyncing || p.fault != nil:
	case ack.Duplicate != f.predictDup:
		// Those in flight after f were sent on the wrong prediction.
		p.resyncing, p.dupMode, p.window = true, ack.Duplicate, 1
	default:
		p.window = min(2*p.window, p.opts.MaxPending)
	}
}

func (p *OrderedPublisher) onErr(f *inflight, err error) {
	p.inFlight--
	var apiErr *jetstream.APIError
	refused := errors.As(err, &apiErr) && (apiErr.ErrorCode == jetstream.JSErrCodeStreamWrongLastSequence ||
		apiErr.ErrorCode == jetstream.JSErrCodeStreamWrongLastSequenceConstant || apiErr.ErrorCode == errCodeWrongLastMsgID)
	switch {
	case refused && p.fault == nil:
		if !p.resyncing {
			// No prediction failed: another writer's message came between.
			p.resyncing, p.interleaved, p.window = true, true, 1
		}
		f.state = unsent
		p.sendFrom = min(p.sendFrom, slices.Index(p.queue, f))
	default:
		f.state = failed
		p.fail(err)
	}
}

// rebase takes the stream's last sequence after another writer's message
// as the point the next event must follow; the message there is not this
// publisher's, so only its sequence is expected.
func (p *OrderedPublisher) rebase(ctx context.Context) error {
	ictx, cancel := context.WithTimeout(ctx, p.opts.AckTimeout)
	defer cancel()
	s, err := p.js.Stream(ictx, p.stream)
	if err != nil {
		if ctx.Err() != nil {
			return ctx.Err()
		}
		p.fail(fmt.Errorf("stream %s after another writer's message: %w", p.stream, err))
		return nil
	}
	p.chain, p.chainID = s.CachedInfo().State.LastSeq, ""
	p.stats.Interleaved++
	return nil
}

// fail records the first fault; the events in flight get until the
// deadline to settle.
func (p *OrderedPublisher) fail(err error) {
	if p.fault == nil {
		p.fault = err
		p.deadline = time.Now().Add(min(p.opts.AckTimeout, 5*time.Second))
	}
}

// pop removes the acknowledged events at the head of the queue and moves
// the ack point past them.
func (p *OrderedPublisher) pop() {
	n := 0
	for n < len(p.queue) && p.queue[n].state == acked {
		f := p.queue[n]
		p.acked = AckPoint{Line: f.line, FileLine: f.fileLine, ID: f.id, Seq: p.chain}
		n++
	}
	if n > 0 {
		k := copy(p.queue, p.queue[n:])
		clear(p.queue[k:])
		p.queue = p.queue[:k]
		p.sendFrom -= n
	}
}

// Acked returns the ack point: the last event of the longest prefix of
// the events published that is acknowledged, and the stream sequence
// after it.
func (p *OrderedPublisher) Acked() AckPoint { return p.acked }

// Stats returns the counts of acknowledged publishes.
func (p *OrderedPublisher) Stats() PublishStats { return p.stats }
