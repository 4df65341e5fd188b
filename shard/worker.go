package shard

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"strings"
	"sync"
	"sync/atomic"
	"time"

	"github.com/nats-io/nats.go"
	"github.com/nats-io/nats.go/jetstream"

	"orbitwatch/delta"
	"orbitwatch/shard/alert"
	"orbitwatch/storage"
	"orbitwatch/stream"
)

// WorkerConfig configures one worker of a deployment.
type WorkerConfig struct {
	// Conn is the NATS connection; the caller closes it after Run.
	Conn *nats.Conn
	// Stream and Subject name the log stream and its subject (defaults
	// DefaultStream, DefaultSubject). Replicas is the replica count of the
	// streams the worker creates when they are absent (default 1).
	Stream, Subject string
	Replicas        int
	// Deployment names this set of workers: its rejects stream
	// (<Deployment>_REJECTS) and subjects. Default Stream.
	Deployment string
	// Shard is this worker's shard among Shards (0 ≤ Shard < Shards ≤
	// 4096): it scores and alerts the nodes OwnerOf gives it. Every worker
	// applies the whole log and keeps the whole state, so the shard count
	// can change between runs (see README).
	Shard, Shards int
	// Counting and Window say what is counted; Cuts where the state is
	// committed (Every defaults to DefaultCutEvery when both are zero);
	// Store is the worker's opened store, created with matching settings.
	// The caller closes it after Run.
	Counting *Counting
	Window   time.Duration
	Cuts     Cuts
	Store    *storage.Store
	// KeepHistory, when above zero, lets the store discard checkpoint
	// versions older than this much event time before the latest cut,
	// never less than the alert rules' look-back needs (KeepFor).
	KeepHistory time.Duration
	// Logf, when set, hears of rejects and retries.
	Logf func(format string, args ...any)
	// Alerts, when set, are evaluated at every cut for the nodes this
	// shard owns whose records changed: stored with the cut, then
	// published as JSON on AlertsSubject(Subject) and handed to Webhook
	// when it is set.
	Alerts  *alert.Evaluator
	Webhook *alert.Webhook
}

// AlertsSubject is the NATS subject on which the workers of a deployment
// whose log subject is subject publish their alerts, one JSON alert per
// message (core NATS: a subscriber that is away misses them; the store
// and the API keep them all).
func AlertsSubject(subject string) string { return subject + ".alerts" }

// workerBlob is the storage blob with the worker's counts.
const workerBlob = "worker"

// workerRecord is stored with every cut.
type workerRecord struct {
	// Applied, Expired and Rejected are the event counts up to the cut,
	// so that counts go on across restarts.
	Applied  uint64            `json:"applied"`
	Expired  uint64            `json:"expired"`
	Rejected map[string]uint64 `json:"rejected,omitempty"`
}

// Worker follows the JetStream event log in order and applies every event
// to the whole in-memory state (DESIGN.md §8: replicated state, partitioned
// work). Cuts fall where the applier's Cuts put them; at each one the
// worker scores the changed nodes it owns, and a committer writes the cut
// to the store in the background. Reads without an as-of point answer from
// the in-memory state at the last applied event; as-of reads derive from
// the store. A worker that is down or slow delays nobody else.
type Worker struct {
	cfg    WorkerConfig
	js     jetstream.JetStream
	mu     sync.RWMutex // guards a against the reads
	a      *Applier
	derive delta.Counter // never updated: Derive for as-of reads
	com    *Committer
	alerts *AlertStage
	owners []int32 // owning shard by dense node id, filled as ids appear
	base   Stats   // counts up to the cut this process started from

	// similar and stored answer nearest-signature queries now and as of
	// a cut (similar.go).
	similar *LiveSignatures
	stored  *StoredSignatures

	// taken lists the cuts handed to the committer and not yet durable,
	// with what the status and the alerts need of them.
	takenMu sync.Mutex
	taken   []takenCut

	startLast  atomic.Uint64 // the log's last seq when Run started; MaxUint64 before
	started    time.Time
	appliedSeq atomic.Uint64
	streamLast atomic.Uint64
	cutSeq     atomic.Uint64
	statMu     sync.Mutex
	snap       Status // cut-time fields, under statMu
	obs        atomic.Value
	sent       atomic.Uint64 // alerts published on the bus
	readAt     time.Time     // when the message that caused the last cut was read

	// retries and stall mirror the committer's refusals for want of
	// space: refused commits tried again, and the refusal being waited out
	// ("" while commits go through).
	retries atomic.Uint64
	stall   atomic.Value // string
	runCtx  context.Context
}

type observerBox struct{ o Observer }

// takenCut is a cut on its way to the store.
type takenCut struct {
	seq       uint64
	watermark time.Time
	stats     Stats
	alerts    []alert.Alert
	readAt    time.Time
}

// NewWorker loads the worker's state from cfg.Store: the last cut's graph,
// the counter restored from its records, the window and the counts.
func NewWorker(cfg WorkerConfig) (*Worker, error) {
	if cfg.Conn == nil || cfg.Store == nil || cfg.Counting == nil {
		panic("shard: NewWorker needs a connection, a store and counters")
	}
	if cfg.Stream == "" {
		cfg.Stream = DefaultStream
	}
	if cfg.Subject == "" {
		cfg.Subject = DefaultSubject
	}
	if cfg.Deployment == "" {
		cfg.Deployment = cfg.Stream
	}
	if strings.ContainsAny(cfg.Deployment, ".*> \t") {
		return nil, fmt.Errorf("deployment name %q: no dots, wildcards or spaces", cfg.Deployment)
	}
	if cfg.Replicas == 0 {
		cfg.Replicas = 1
	}
	if cfg.Cuts == (Cuts{}) {
		cfg.Cuts.Every = DefaultCutEvery
	}
	if cfg.Shards < 1 || cfg.Shards > 4096 || cfg.Shard < 0 || cfg.Shard >= cfg.Shards {
		return nil, fmt.Errorf("shard %d of %d: want 0 ≤ shard < shards ≤ 4096", cfg.Shard, cfg.Shards)
	}
	js, err := jetstream.New(cfg.Conn)
	if err != nil {
		return nil, err
	}
	a, state, err := LoadApplier(cfg.Counting, cfg.Window, cfg.Cuts, cfg.Store)
	if err != nil {
		return nil, err
	}
	w := &Worker{cfg: cfg, js: js, a: a, derive: cfg.Counting.New(), started: time.Now()}
	w.similar = NewLiveSignatures(cfg.Counting)
	w.stored = NewStoredSignatures(cfg.Store, cfg.Counting, w.similar.Metric())
	if cfg.Alerts != nil {
		w.alerts = NewAlertStage(cfg.Alerts, cfg.Counting)
		if err := w.alerts.Restore(cfg.Store, state); err != nil {
			return nil, err
		}
	}
	if b, ok := state.Blobs[workerBlob]; ok {
		var rec workerRecord
		if err := json.Unmarshal(b, &rec); err != nil {
			return nil, fmt.Errorf("stored worker record: %w", err)
		}
		w.base = Stats{Applied: rec.Applied, Expired: rec.Expired, Rejected: rec.Rejected}
	}
	a.OnCut = w.onCut
	w.startLast.Store(math.MaxUint64)
	w.appliedSeq.Store(a.Seq())
	w.cutSeq.Store(a.Seq())
	w.snapshot(takenCut{seq: a.Seq(), watermark: a.Watermark(), stats: w.stats()})
	return w, nil
}

// LoadApplier returns an applier that continues from st's last complete
// checkpoint (an empty store: from the log's start), with the checkpoint's
// state.
func LoadApplier(c *Counting, win time.Duration, cuts Cuts, st *storage.Store) (*Applier, *storage.State, error) {
	state, err := st.Load()
	if err != nil {
		return nil, nil, err
	}
	if state.Seq == 0 {
		return NewApplier(c, win, cuts), state, nil
	}
	src, err := st.SourceAt(state.Seq)
	if err != nil {
		return nil, nil, err
	}
	defer src.Close()
	a, err := Restore(c, win, cuts, state, src)
	return a, state, err
}

// Run follows the log until ctx is done, then writes the cuts already
// taken and returns nil; the events applied after the last cut are read
// again by the next Run (after NewWorker on the same store), so a stop
// never moves a cut. Any other return is an error that stops the worker:
// an invariant violation, a store that refuses a commit, a server refusal
// a retry cannot mend. At start-up, while JetStream does not answer in
// time or refuses as temporarily unavailable (a cluster electing a leader,
// a server restarting), Run tries again with growing pauses until ctx is
// done, telling Logf each time.
func (w *Worker) Run(ctx context.Context) error {
	w.com = NewCommitter(w.cfg.Store, 64)
	w.com.KeepHistory = KeepFor(w.cfg.KeepHistory, w.alerts, w.cfg.Cuts)
	w.com.OnCommit = w.committed
	w.com.OnStall = w.stalled
	w.runCtx = ctx
	err := w.run(ctx)
	if ctx.Err() != nil && errors.Is(err, ctx.Err()) {
		err = nil
	}
	// A stop while the store refuses commits for want of space ends with
	// that refusal: the cuts taken since the last durable one are not
	// written (the next Run reads their events again).
	if cerr := w.com.Close(); err == nil {
		err = cerr
	}
	return err
}

// stalled hears of a commit the store refused for want of space; the
// committer tries it again after pause.
func (w *Worker) stalled(err error, try int, pause time.Duration) {
	reason := err.Error()
	var se *storage.SpaceError
	if errors.As(err, &se) {
		err, reason = se, se.Reason()
	}
	w.retries.Add(1)
	w.stall.Store(reason)
	if w.cfg.Logf != nil {
		w.cfg.Logf("commit refused (try %d, the next in %s): %v", try, pause.Round(time.Millisecond), err)
	}
}

func (w *Worker) run(ctx context.Context) error {
	last, err := startStreams(ctx, w.js, &w.cfg)
	if err != nil {
		return err
	}
	w.startLast.Store(last)
	w.streamLast.Store(max(last, w.a.Seq()))
	fctx, cancel := context.WithCancel(ctx)
	var wg sync.WaitGroup
	defer wg.Wait()
	defer cancel()
	logCh := make(chan inMsg, 4096)
	wg.Add(1)
	go func() { defer wg.Done(); follow(fctx, w.js, w.cfg.Stream, "", w.a.Seq()+1, logCh) }()
	for {
		select {
		case <-ctx.Done():
			return nil
		case m := <-logCh:
			if err := w.batch(ctx, m, logCh); err != nil {
				return err
			}
		}
	}
}

// maxBatch bounds how many log messages the worker applies under one hold
// of its lock, so reads wait at most that long.
const maxBatch = 512

// batch applies m and the messages already waiting behind it (up to
// maxBatch) under the write lock.
func (w *Worker) batch(ctx context.Context, m inMsg, logCh <-chan inMsg) error {
	w.mu.Lock()
	defer w.mu.Unlock()
	for n := 0; ; n++ {
		if err := w.message(ctx, m); err != nil {
			return err
		}
		if n == maxBatch {
			return nil
		}
		select {
		case m = <-logCh:
		default:
			return nil
		}
	}
}

// message applies one log message.
func (w *Worker) message(ctx context.Context, m inMsg) error {
	if m.seq <= w.a.Seq() {
		return nil
	}
	w.readAt = m.read
	w.streamLast.Store(m.seq + m.pending)
	var err error
	if m.header.Get(ControlHeader) != "" {
		err = w.a.Pass(m.seq)
	} else {
		err = w.event(ctx, m)
	}
	if err != nil {
		return err
	}
	w.appliedSeq.Store(m.seq)
	return nil
}

// malformedReason is the reject reason counted for a log message that does
// not decode; the decoder's own words go with the republished message.
const malformedReason = "malformed bus message"

func (w *Worker) event(ctx context.Context, m inMsg) error {
	ev, err := stream.DecodeMessage(m.data)
	if err != nil {
		if err := w.a.RejectLine(m.seq, malformedReason); err != nil {
			return err
		}
		return w.reject(ctx, m, err.Error())
	}
	ev.Line = int(m.seq)
	if ev.ID == "" {
		ev.ID = m.header.Get(jetstream.MsgIDHeader)
	}
	err = w.a.Apply(m.seq, ev)
	var rj *Reject
	if errors.As(err, &rj) {
		return w.reject(ctx, m, rj.Reason.Error())
	}
	if err != nil {
		return fmt.Errorf("log seq %d: %w", m.seq, err)
	}
	return nil
}

// reject republishes a rejected log message on the rejects subject with
// its reason and sequence. Every worker rejects it; the one whose shard is
// seq mod Shards republishes it, under an id made of the sequence, so it is
// kept once.
func (w *Worker) reject(ctx context.Context, m inMsg, reason string) error {
	if w.cfg.Logf != nil {
		w.cfg.Logf("log seq %d rejected: %s", m.seq, reason)
	}
	if m.seq%uint64(w.cfg.Shards) != uint64(w.cfg.Shard) {
		return nil
	}
	msg := nats.NewMsg(RejectsSubject(w.cfg.Subject, w.cfg.Deployment))
	msg.Data = m.data
	msg.Header.Set(RejectReasonHeader, reason)
	msg.Header.Set(RejectSeqHeader, fmt.Sprint(m.seq))
	return publishRetry(ctx, w.js, msg, fmt.Sprintf("%s/reject/%d", w.cfg.Deployment, m.seq))
}

// onCut runs in the applier at every cut, with the applier's state exactly
// the cut's: it scores the owned nodes whose records changed, adds the
// worker's counts and hands the cut to the committer.
func (w *Worker) onCut(cp *storage.Checkpoint) error {
	st := w.stats()
	rec, err := json.Marshal(workerRecord{Applied: st.Applied, Expired: st.Expired, Rejected: st.Rejected})
	if err != nil {
		return err
	}
	cp.Blobs[workerBlob] = rec
	tc := takenCut{seq: cp.Seq, watermark: cp.Watermark, stats: st, readAt: w.readAt}
	w.similar.Cut(cp)
	if w.alerts != nil {
		if tc.alerts, err = w.alerts.Evaluate(w.a, cp, w.owned, time.Now()); err != nil {
			return fmt.Errorf("cut %d: %w", cp.Seq, err)
		}
	}
	// Wait for room in the committer's queue without the lock (onCut runs
	// under batch's write lock): while the store refuses commits the queue
	// stays full, and status, readiness and reads must still answer. Only
	// this goroutine changes the state, which stays the cut's meanwhile.
	w.mu.Unlock()
	w.com.WaitRoom(w.runCtx)
	w.mu.Lock()
	if err := w.runCtx.Err(); err != nil {
		return fmt.Errorf("cut %d: %w", cp.Seq, err)
	}
	w.takenMu.Lock()
	w.taken = append(w.taken, tc)
	w.takenMu.Unlock()
	if err := w.com.Put(cp); err != nil {
		return fmt.Errorf("cut %d: %w", cp.Seq, err)
	}
	w.cutSeq.Store(cp.Seq)
	if o := w.observer(); o != nil && !w.readAt.IsZero() {
		o.Batch(time.Since(w.readAt))
	}
	return nil
}

// committed runs in the committer after a group of cuts is durable: the
// alerts of those cuts go out and the status moves on. It takes no lock
// the applier holds while it waits for the committer.
func (w *Worker) committed(group []*storage.Checkpoint) {
	w.stall.Store("")
	last := group[len(group)-1].Seq
	w.takenMu.Lock()
	i := 0
	for i < len(w.taken) && w.taken[i].seq <= last {
		i++
	}
	done := w.taken[:i:i]
	w.taken = w.taken[i:]
	w.takenMu.Unlock()
	if len(done) == 0 {
		return
	}
	for _, tc := range done {
		w.announce(tc.alerts)
	}
	tc := done[len(done)-1]
	w.snapshot(tc)
	if o := w.observer(); o != nil && !tc.readAt.IsZero() {
		o.Cut(time.Since(tc.readAt))
	}
}

// owned reports whether this shard owns dense node x.
func (w *Worker) owned(x uint32) bool { return w.ownerOf(x) == w.cfg.Shard }

func (w *Worker) ownerOf(x uint32) int {
	for int(x) >= len(w.owners) {
		w.owners = append(w.owners, int32(OwnerOf(w.a.dict.Name(uint32(len(w.owners))), w.cfg.Shards)))
	}
	return int(w.owners[x])
}

// announce publishes a committed cut's alerts on the bus and hands them to
// the webhook. Neither waits for the network: core NATS publishes are
// buffered by the client, the webhook queues.
func (w *Worker) announce(alerts []alert.Alert) {
	if len(alerts) == 0 {
		return
	}
	subj := AlertsSubject(w.cfg.Subject)
	for _, a := range alerts {
		b, err := json.Marshal(a)
		if err != nil {
			panic("shard: alert does not encode as JSON: " + err.Error())
		}
		msg := nats.NewMsg(subj)
		msg.Data = b
		msg.Header.Set(alert.AlertIDHeader, a.ID)
		if err := w.cfg.Conn.PublishMsg(msg); err != nil {
			if w.cfg.Logf != nil {
				w.cfg.Logf("alert %s not published on %s: %v", a.ID, subj, err)
			}
			continue
		}
		w.sent.Add(1)
	}
	if w.cfg.Webhook != nil {
		w.cfg.Webhook.Send(alerts...)
	}
}

// stats are the event counts since the log's start: those stored with the
// cut this process started from plus the applier's since.
func (w *Worker) stats() Stats {
	st := w.a.Stats()
	st.Applied += w.base.Applied
	st.Expired += w.base.Expired
	for r, k := range w.base.Rejected {
		st.Rejected[r] += k
	}
	return st
}

// snapshot records the status fields of a durable cut.
func (w *Worker) snapshot(tc takenCut) {
	w.statMu.Lock()
	defer w.statMu.Unlock()
	w.snap = Status{Shard: w.cfg.Shard, Shards: w.cfg.Shards, CommittedSeq: tc.seq,
		Applied: tc.stats.Applied, Expired: tc.stats.Expired, Rejected: tc.stats.Rejected,
		Watermark: tc.watermark, StartedAt: w.started}
	if tc.seq > 0 {
		w.snap.CommittedAt = time.Now()
	}
}

func (w *Worker) observer() Observer {
	if b, ok := w.obs.Load().(observerBox); ok {
		return b.o
	}
	return nil
}

// Store returns the worker's store.
func (w *Worker) Store() *storage.Store { return w.cfg.Store }

// Counting returns the counters in use.
func (w *Worker) Counting() *Counting { return w.cfg.Counting }

// Shard returns this worker's shard and the shard count.
func (w *Worker) Shard() (i, n int) { return w.cfg.Shard, w.cfg.Shards }

// Owner returns the shard owning node id.
func (w *Worker) Owner(node string) int { return OwnerOf(node, w.cfg.Shards) }

// SetObserver registers o for batch and cut timings; nil stops them.
func (w *Worker) SetObserver(o Observer) { w.obs.Store(observerBox{o}) }

// Status returns a snapshot of the worker's progress.
func (w *Worker) Status() Status {
	w.statMu.Lock()
	st := w.snap
	st.Rejected = make(map[string]uint64, len(w.snap.Rejected))
	for k, n := range w.snap.Rejected {
		st.Rejected[k] = n
	}
	w.statMu.Unlock()
	// The counts are those of the last applied event: the applier holds its
	// lock for at most one batch of messages.
	w.mu.RLock()
	live := w.stats()
	w.mu.RUnlock()
	st.Applied, st.Expired, st.Rejected = live.Applied, live.Expired, live.Rejected
	st.AppliedSeq = w.appliedSeq.Load()
	st.CutSeq = w.cutSeq.Load()
	st.StreamLastSeq = max(w.streamLast.Load(), st.AppliedSeq)
	st.Lag = st.StreamLastSeq - min(st.AppliedSeq, st.StreamLastSeq)
	st.CommitRetries = w.retries.Load()
	st.Stalled, _ = w.stall.Load().(string)
	st.Ready = st.AppliedSeq >= w.startLast.Load() && st.Stalled == ""
	st.AlertsPublished = w.sent.Load()
	return st
}

var _ View = (*Worker)(nil)
