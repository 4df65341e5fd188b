package shard

import (
	"context"
	"errors"
	"fmt"
	"math/rand/v2"
	"time"

	"github.com/nats-io/nats.go"
	"github.com/nats-io/nats.go/jetstream"

	"orbitwatch/stream"
)

// Defaults for a deployment's names.
const (
	DefaultStream  = "ORBITWATCH"
	DefaultSubject = "orbitwatch.events"
)

// Headers of the control and reject messages this package reads and
// writes.
const (
	// ControlHeader marks a log message that is not an event; it uses up
	// its position and changes nothing.
	ControlHeader = "Orbitwatch-Control"
	// RejectReasonHeader and RejectSeqHeader go with a message republished
	// on the rejects subject: why it was rejected and its log sequence.
	RejectReasonHeader = "Orbitwatch-Reject-Reason"
	RejectSeqHeader    = "Orbitwatch-Reject-Seq"
)

func rejectsStream(cfg *WorkerConfig) string { return cfg.Deployment + "_REJECTS" }

// RejectsSubject is where the workers of a deployment republish the log
// messages they reject, with RejectReasonHeader and RejectSeqHeader: <log
// subject>.<deployment>.rejects. A stream named <deployment>_REJECTS
// keeps them.
func RejectsSubject(subject, deployment string) string {
	return subject + "." + deployment + ".rejects"
}

// ensureStreams creates (or checks) the log stream and the rejects stream
// and returns the log's last sequence.
func ensureStreams(ctx context.Context, js jetstream.JetStream, cfg *WorkerConfig) (last uint64, err error) {
	log, err := stream.EnsureStream(ctx, js, cfg.Stream, cfg.Subject, cfg.Replicas)
	if err != nil {
		return 0, err
	}
	if _, err := stream.EnsureStream(ctx, js, rejectsStream(cfg), RejectsSubject(cfg.Subject, cfg.Deployment), cfg.Replicas); err != nil {
		return 0, err
	}
	info, err := log.Info(ctx)
	if err != nil {
		return 0, fmt.Errorf("log stream %s: %w", cfg.Stream, err)
	}
	return info.State.LastSeq, nil
}

// Start-up pacing: how long one attempt at the streams may wait for the
// server, the pause after the first failed attempt, and the longest pause
// (each pause doubles the last, plus up to a quarter of it at random so
// that the workers of a deployment do not ask in step).
const (
	startAttempt   = 5 * time.Second
	startFirstWait = 100 * time.Millisecond
	startMaxWait   = 5 * time.Second
)

// startStreams runs ensureStreams until it succeeds, fails with an error a
// later attempt cannot mend (see transient), or ctx is done (then it
// returns ctx.Err()). Each failed attempt is told to cfg.Logf, when set,
// with its reason and the pause before the next: at start-up a cluster
// may still be electing a leader (requests time out or are refused as
// temporarily unavailable), or the server may be restarting.
func startStreams(ctx context.Context, js jetstream.JetStream, cfg *WorkerConfig) (last uint64, err error) {
	wait := startFirstWait
	for attempt := 1; ; attempt++ {
		actx, cancel := context.WithTimeout(ctx, startAttempt)
		last, err = ensureStreams(actx, js, cfg)
		cancel()
		if err == nil {
			return last, nil
		}
		if ctx.Err() != nil {
			return 0, ctx.Err()
		}
		if !transient(err) {
			return 0, err
		}
		d := wait + rand.N(wait/4+1)
		if cfg.Logf != nil {
			cfg.Logf("start-up attempt %d: %v; trying again in %v", attempt, err, d.Round(time.Millisecond))
		}
		pause(ctx, d)
		wait = min(2*wait, startMaxWait)
	}
}

// JetStream error codes (the server's err_code) of refusals that last
// only while a cluster settles: no meta leader or quorum yet, a server
// that is not the leader, a stream offline while its peers are down,
// results missing from a peer, and no peers to place a replica on (a
// killed server's place is empty until it returns).
const (
	codeClusterNotAvailable = 10008
	codeClusterNotLeader    = 10009
	codeStreamOffline       = 10118
	codeStreamOfflineReason = 10194
	codeClusterIncomplete   = 10004
	codeClusterNoPeers      = 10005
)

// transient reports whether a later attempt may succeed where err failed:
// the server did not answer in time (a request timed out: a server
// restarting or a cluster electing a leader), or JetStream refused with
// one of the codes above. Everything else is final: a stream with other
// settings, a shard count or batch mismatch, no JetStream at the server
// (no responder: a JetStream server answers its API before it accepts
// clients), a closed connection, a permission or authorization error.
func transient(err error) bool {
	if errors.Is(err, context.DeadlineExceeded) || errors.Is(err, nats.ErrTimeout) || errors.Is(err, nats.ErrConnectionReconnecting) {
		return true
	}
	var apiErr *jetstream.APIError
	if !errors.As(err, &apiErr) {
		return false
	}
	switch apiErr.ErrorCode {
	case codeClusterNotAvailable, codeClusterNotLeader, codeStreamOffline, codeStreamOfflineReason, codeClusterIncomplete, codeClusterNoPeers:
		return true
	}
	return false
}

// inMsg is one message read from a stream, in order.
type inMsg struct {
	seq     uint64 // stream sequence
	pending uint64 // messages after it in the stream when it was delivered
	data    []byte
	header  nats.Header
	read    time.Time
}

// stallAfter is how long a reader waits for its next message while the
// stream holds messages past it before it drops its consumer and makes a
// new one: after a cluster server is killed, the client library's own
// reset of an ordered consumer has been seen to stay stuck for minutes.
const stallAfter = 3 * time.Second

// follow reads stream name (only filter, when set) in order from sequence
// start into out until ctx is done. A transport failure (a server restart,
// a lost consumer) or a stalled consumer is retried from the next sequence
// after a pause, so out sees every sequence once and in order.
func follow(ctx context.Context, js jetstream.JetStream, name, filter string, start uint64, out chan<- inMsg) {
	next := max(start, 1)
	for ctx.Err() == nil {
		rctx, cancel := context.WithCancel(ctx)
		in := make(chan inMsg, 256)
		done := make(chan struct{})
		go func(from uint64) {
			defer close(done)
			readFrom(rctx, js, name, filter, from, in)
		}(next)
		next = forward(ctx, js, name, filter, next, in, done, out)
		cancel()
		pause(ctx, 100*time.Millisecond)
	}
}

// readFrom makes one ordered consumer from sequence next and drains it into
// in until it fails or ctx is done.
func readFrom(ctx context.Context, js jetstream.JetStream, name, filter string, next uint64, in chan<- inMsg) {
	cfg := jetstream.OrderedConsumerConfig{DeliverPolicy: jetstream.DeliverAllPolicy}
	if next > 1 {
		cfg.DeliverPolicy, cfg.OptStartSeq = jetstream.DeliverByStartSequencePolicy, next
	}
	if filter != "" {
		cfg.FilterSubjects = []string{filter}
	}
	c, err := js.OrderedConsumer(ctx, name, cfg)
	if err != nil {
		pause(ctx, 200*time.Millisecond)
		return
	}
	it, err := c.Messages(jetstream.PullMaxMessages(2048))
	if err != nil {
		pause(ctx, 200*time.Millisecond)
		return
	}
	drain(ctx, it, next, in)
	it.Stop()
}

// forward passes messages from one consumer's reader to out in sequence
// order and returns the next sequence wanted when the reader ends, or when
// it has delivered nothing for stallAfter although the stream has more.
func forward(ctx context.Context, js jetstream.JetStream, name, filter string, next uint64, in <-chan inMsg, done <-chan struct{}, out chan<- inMsg) uint64 {
	tick := time.NewTicker(time.Second)
	defer tick.Stop()
	last := time.Now()
	for {
		select {
		case m := <-in:
			if m.seq < next {
				continue
			}
			select {
			case out <- m:
				next, last = m.seq+1, time.Now()
			case <-ctx.Done():
				return next
			}
		case <-done:
			return next
		case <-tick.C:
			if time.Since(last) >= stallAfter && streamHasFrom(ctx, js, name, filter, next) {
				return next
			}
		case <-ctx.Done():
			return next
		}
	}
}

// streamHasFrom reports whether stream name holds a message at sequence
// next or later (on filter, when set). Failures to ask count as no.
func streamHasFrom(ctx context.Context, js jetstream.JetStream, name, filter string, next uint64) bool {
	qctx, cancel := context.WithTimeout(ctx, 2*time.Second)
	defer cancel()
	st, err := js.Stream(qctx, name)
	if err != nil {
		return false
	}
	if filter == "" {
		info, err := st.Info(qctx)
		return err == nil && info.State.LastSeq >= next
	}
	m, err := st.GetLastMsgForSubject(qctx, filter)
	return err == nil && m.Sequence >= next
}

// drain moves messages from it to out until an error, returning the next
// sequence wanted. Messages below next (a redelivery after a reset) are
// dropped.
func drain(ctx context.Context, it jetstream.MessagesContext, next uint64, out chan<- inMsg) uint64 {
	stop := context.AfterFunc(ctx, it.Stop)
	defer stop()
	for {
		m, err := it.Next()
		if err != nil {
			return next
		}
		md, err := m.Metadata()
		if err != nil {
			return next
		}
		if md.Sequence.Stream < next {
			continue
		}
		select {
		case out <- inMsg{seq: md.Sequence.Stream, pending: md.NumPending, data: m.Data(), header: m.Headers(), read: time.Now()}:
			next = md.Sequence.Stream + 1
		case <-ctx.Done():
			return next
		}
	}
}

func pause(ctx context.Context, d time.Duration) {
	t := time.NewTimer(d)
	defer t.Stop()
	select {
	case <-t.C:
	case <-ctx.Done():
	}
}

// publishRetry publishes msg with the given message id, retrying transport
// failures (a server restarting, no quorum yet) until ctx is done. A
// rejection by the server that retrying cannot mend is returned.
func publishRetry(ctx context.Context, js jetstream.JetStream, msg *nats.Msg, id string) error {
	wait := 50 * time.Millisecond
	for {
		pctx, cancel := context.WithTimeout(ctx, 5*time.Second)
		_, err := js.PublishMsg(pctx, msg, jetstream.WithMsgID(id))
		cancel()
		if err == nil {
			return nil
		}
		var apiErr *jetstream.APIError
		if errors.As(err, &apiErr) && apiErr.Code != 503 || errors.Is(err, nats.ErrMaxPayload) || errors.Is(err, nats.ErrBadSubject) {
			return fmt.Errorf("publish %s: %w", id, err)
		}
		if ctx.Err() != nil {
			return ctx.Err()
		}
		pause(ctx, wait)
		wait = min(2*wait, 2*time.Second)
	}
}
