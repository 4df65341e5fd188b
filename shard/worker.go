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

	"orbitwatch/shard/alert"
	"orbitwatch/storage"
	"orbitwatch/stream"
)

// WorkerConfig configures one shard worker of a deployment.
type WorkerConfig struct {
	// Conn is the NATS connection; the caller closes it after Run.
	Conn *nats.Conn
	// Stream and Subject name the log stream and its subject (defaults
	// DefaultStream, DefaultSubject). Replicas is the replica count of the
	// streams the worker creates when they are absent (default 1).
	Stream, Subject string
	Replicas        int
	// Deployment names this set of workers: its shuffle and rejects
	// streams (<Deployment>_SHUFFLE, <Deployment>_REJECTS) and its
	// subjects. Default Stream. Two deployments, e.g. with different
	// shard counts, can follow one log under different names.
	Deployment string
	// Shard is this worker's shard among Shards (0 ≤ Shard < Shards ≤ 4096).
	Shard, Shards int
	// Batch is the number of log positions per batch (default
	// DefaultBatch); Idle the idle time before shard 0 asks for a cut of
	// a partly filled batch (default DefaultIdle); MaxDelay the age of a
	// batch's first message after which shard 0 asks for a cut even while
	// events keep coming (default DefaultMaxDelay; negative: never).
	Batch    uint64
	Idle     time.Duration
	MaxDelay time.Duration
	// Counting and Window say what is counted (Counting's engine is the
	// worker's own: engines are not safe for concurrent use); Store is the worker's
	// opened store, created with matching settings. The caller closes it
	// after Run.
	Counting *Counting
	Window   time.Duration
	Store    *storage.Store
	// Logf, when set, hears of rejects and retries.
	Logf func(format string, args ...any)
	// Alerts, when set, are evaluated at every cut for the nodes this
	// shard owns (AlertStage): stored with the cut, then published as JSON
	// on AlertsSubject(Subject) and handed to Webhook when it is set. The
	// evaluator's state goes into every checkpoint and is restored from
	// the store, so hysteresis and cool-downs survive a restart.
	Alerts  *alert.Evaluator
	Webhook *alert.Webhook
}

// alertsBlob is the storage blob with the alert evaluator's state.
const alertsBlob = "alerts"

// AlertsSubject is the NATS subject on which the workers of a deployment
// whose log subject is subject publish their alerts, one JSON alert per
// message (core NATS: a subscriber that is away misses them; the store
// and the API keep them all).
func AlertsSubject(subject string) string { return subject + ".alerts" }

// workerBlob is the storage blob with the worker's shuffle positions.
const workerBlob = "worker"

// workerRecord is stored with every cut, in the same checkpoint as the
// adjacency and the owned vectors.
type workerRecord struct {
	Shard  int    `json:"shard"`
	Shards int    `json:"shards"`
	Batch  uint64 `json:"batch"`
	// Cut is the last complete cut (the log sequence its batch ends at).
	Cut uint64 `json:"cut"`
	// Origins holds the last batch applied from each origin shard.
	Origins []uint64 `json:"origins"`
	// ShuffleNext is the shuffle stream sequence to read on from.
	ShuffleNext uint64 `json:"shuffle_next"`
	// Applied, Expired and Rejected are the event counts up to Cut, so
	// that counts go on across restarts.
	Applied  uint64            `json:"applied"`
	Expired  uint64            `json:"expired"`
	Rejected map[string]uint64 `json:"rejected,omitempty"`
}

// Worker is one shard of a deployment. It reads the whole log in order,
// keeps the whole adjacency, computes the orbit changes of the edges
// EdgeShard gives it, sends each owner one message per batch with the
// summed changes for the owner's nodes, and applies the changes for its
// own nodes once all shards' messages of a batch are in: that batch's end
// is then a complete cut, committed to the store with the adjacency and
// the shuffle positions in one checkpoint.
//
// Batches end at every multiple of Batch and at cut control messages,
// which shard 0 writes into the log itself when it is caught up and a
// partly filled batch has been idle for Idle, or when the batch has been
// open for MaxDelay while events keep coming: the cut is then at a log
// position every worker sees.
type Worker struct {
	cfg WorkerConfig
	js  jetstream.JetStream
	a   *Applier
	out *outbox
	buf []byte

	owners  []int32 // owning shard by dense node id, filled as ids appear
	cut     uint64
	origins []uint64
	base    Stats                 // counts up to the cut this process started from
	inbox   map[uint64][]*arrived // by batch end, one slot per origin
	merged  sums                  // a batch's changes summed over origins
	mergedX []uint32              // the nodes with merged changes
	shufNxt uint64

	batchFirst time.Time // when the current batch's first message was read
	lastRead   time.Time
	pending    uint64
	cutAsked   uint64
	partLimit  int                    // tests: bytes of changes per shuffle part (0: from the server's maximum payload)
	cutAck     jetstream.PubAckFuture // of the last cut request, until seen

	startLast  atomic.Uint64 // the log's last seq when Run started; MaxUint64 before
	started    time.Time
	appliedSeq atomic.Uint64
	streamLast atomic.Uint64
	mu         sync.Mutex
	snap       Status // cut-time fields, under mu
	obs        atomic.Value

	alerts *AlertStage       // nil without Alerts
	nbrReq chan neighborsReq // neighbourhood reads, answered by Run's goroutine
	blobs  map[string][]byte // reused for every checkpoint
	sent   atomic.Uint64     // alerts published on the bus
}

type observerBox struct{ o Observer }

// NewWorker loads the worker's state from cfg.Store. A store written by
// another shard, or for another shard count or batch size, is refused.
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
	if cfg.Batch == 0 {
		cfg.Batch = DefaultBatch
	}
	if cfg.Idle == 0 {
		cfg.Idle = DefaultIdle
	}
	if cfg.MaxDelay == 0 {
		cfg.MaxDelay = DefaultMaxDelay
	}
	if cfg.Shards < 1 || cfg.Shards > 4096 || cfg.Shard < 0 || cfg.Shard >= cfg.Shards {
		return nil, fmt.Errorf("shard %d of %d: want 0 ≤ shard < shards ≤ 4096", cfg.Shard, cfg.Shards)
	}
	if cfg.Counting.Catalog.NumOrbits() > 1<<16 {
		return nil, fmt.Errorf("%d orbits: shuffle messages carry at most 65536", cfg.Counting.Catalog.NumOrbits())
	}
	js, err := jetstream.New(cfg.Conn)
	if err != nil {
		return nil, err
	}
	state, err := cfg.Store.Load()
	if err != nil {
		return nil, err
	}
	a, err := Restore(cfg.Counting, cfg.Window, state)
	if err != nil {
		return nil, err
	}
	w := &Worker{cfg: cfg, js: js, a: a, out: newOutbox(cfg.Shards, cfg.Counting.Catalog.NumOrbits()), inbox: map[uint64][]*arrived{}, merged: newSums(cfg.Counting.Catalog.NumOrbits()),
		origins: make([]uint64, cfg.Shards), shufNxt: 1, started: time.Now(), nbrReq: make(chan neighborsReq), blobs: map[string][]byte{}}
	if cfg.Alerts != nil {
		w.alerts = NewAlertStage(cfg.Alerts)
		if b, ok := state.Blobs[alertsBlob]; ok {
			if err := cfg.Alerts.UnmarshalBinary(b); err != nil {
				return nil, fmt.Errorf("stored alert state: %w", err)
			}
		}
	}
	if b, ok := state.Blobs[workerBlob]; ok {
		var rec workerRecord
		if err := json.Unmarshal(b, &rec); err != nil {
			return nil, fmt.Errorf("stored worker record: %w", err)
		}
		if rec.Shard != cfg.Shard || rec.Shards != cfg.Shards || rec.Batch != cfg.Batch || len(rec.Origins) != cfg.Shards {
			return nil, fmt.Errorf("this data directory holds shard %d of %d with batches of %d; this worker is shard %d of %d with batches of %d",
				rec.Shard, rec.Shards, rec.Batch, cfg.Shard, cfg.Shards, cfg.Batch)
		}
		if rec.Cut != state.Seq {
			return nil, fmt.Errorf("stored worker record is at cut %d, the checkpoint at %d", rec.Cut, state.Seq)
		}
		w.cut, w.origins, w.shufNxt = rec.Cut, rec.Origins, rec.ShuffleNext
		w.base = Stats{Applied: rec.Applied, Expired: rec.Expired, Rejected: rec.Rejected}
	} else if state.Seq != 0 {
		return nil, fmt.Errorf("this data directory was not written by a worker (it is at seq %d): give an empty directory", state.Seq)
	}
	a.Route(w.computes, w.emit)
	w.startLast.Store(math.MaxUint64)
	w.appliedSeq.Store(a.Seq())
	w.snapshot()
	return w, nil
}

// computes reports whether this shard computes the change of edge {u,v}.
func (w *Worker) computes(u, v uint32) bool {
	if w.cfg.Shards == 1 {
		return true
	}
	return EdgeShard(w.a.dict.Name(u), w.a.dict.Name(v), w.cfg.Shards) == w.cfg.Shard
}

func (w *Worker) emit(x uint32, o int, d int64) {
	w.out.add(w.ownerOf(x), x, o, d)
}

func (w *Worker) ownerOf(x uint32) int {
	for int(x) >= len(w.owners) {
		w.owners = append(w.owners, int32(OwnerOf(w.a.dict.Name(uint32(len(w.owners))), w.cfg.Shards)))
	}
	return int(w.owners[x])
}

// Run follows the log until ctx is done, then returns nil: the state at
// the last complete cut is in the store (a single shard first cuts what it
// has read), and a new Run (after NewWorker on
// the same store) goes on from there. Any other return is an error that
// stops the worker: an invariant violation or a server refusal. At
// start-up, while JetStream does not answer in time or refuses as
// temporarily unavailable (a cluster electing a leader, a server
// restarting), Run tries again with growing pauses until ctx is done,
// telling Logf each time; a refusal that retrying cannot mend (streams
// with other settings, another shard count) is returned at once.
func (w *Worker) Run(ctx context.Context) error {
	err := w.run(ctx)
	if ctx.Err() != nil && errors.Is(err, ctx.Err()) {
		return nil
	}
	return err
}

func (w *Worker) run(ctx context.Context) error {
	last, err := startStreams(ctx, w.js, &w.cfg)
	if err != nil {
		return err
	}
	w.startLast.Store(last)
	w.streamLast.Store(max(last, w.a.Seq()))
	w.snapshot()
	// The readers outlive ctx by a little: a single shard's final cut
	// still reads its own shuffle message.
	fctx, cancel := context.WithCancel(context.Background())
	var wg sync.WaitGroup
	defer wg.Wait()
	defer cancel()
	logCh := make(chan inMsg, 4096)
	shufCh := make(chan inMsg, 256)
	wg.Add(2)
	go func() { defer wg.Done(); follow(fctx, w.js, w.cfg.Stream, "", w.a.Seq()+1, logCh) }()
	go func() {
		defer wg.Done()
		follow(fctx, w.js, shuffleStream(&w.cfg), shuffleSubject(&w.cfg, w.cfg.Shard), w.shufNxt, shufCh)
	}()
	sub, err := w.serveReads()
	if err != nil {
		return err
	}
	defer sub.Unsubscribe()

	var tick <-chan time.Time
	if w.cfg.Shard == 0 {
		every := w.cfg.Idle
		if w.cfg.MaxDelay > 0 {
			every = min(every, w.cfg.MaxDelay)
		}
		t := time.NewTicker(max(every/4, time.Millisecond))
		defer t.Stop()
		tick = t.C
	}
	for {
		select {
		case <-ctx.Done():
			return w.finalCut(shufCh)
		case m := <-logCh:
			if err := w.logMsg(ctx, m, shufCh); err != nil {
				return err
			}
		case m := <-shufCh:
			w.receive(m)
		case q := <-w.nbrReq:
			q.reply <- w.neighbors(q)
		case <-tick:
			if err := w.askCut(ctx); err != nil {
				return err
			}
		}
	}
}

// logMsg applies one log message and ends the batch when it is a batch's
// last.
func (w *Worker) logMsg(ctx context.Context, m inMsg, shufCh <-chan inMsg) error {
	seq := m.seq
	if seq <= w.a.Seq() {
		return nil
	}
	if w.a.Seq() == w.cut {
		w.batchFirst = m.read
	}
	w.lastRead, w.pending = m.read, m.pending
	w.streamLast.Store(seq + m.pending)
	isCut := false
	if v := m.header.Get(ControlHeader); v != "" {
		w.a.Pass(seq)
		isCut = v == "cut"
	} else if err := w.event(ctx, m); err != nil {
		return err
	}
	w.appliedSeq.Store(seq)
	if isCut || seq%w.cfg.Batch == 0 {
		return w.endBatch(ctx, seq, m.read, shufCh)
	}
	return nil
}

// malformedReason is the reject reason counted for a log message that does
// not decode; the decoder's own words go with the republished message.
const malformedReason = "malformed bus message"

func (w *Worker) event(ctx context.Context, m inMsg) error {
	ev, err := stream.DecodeMessage(m.data)
	if err != nil {
		w.a.RejectLine(m.seq, malformedReason)
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

// askCut, on shard 0, writes a cut control message into the log when a
// batch is partly filled and either the log has been idle for Idle with
// shard 0 having read all of it, or the batch has been open for MaxDelay.
// One request is outstanding at a time: until a cut passes the position it
// was asked at. The message id names the position it follows, so a
// restarted shard 0 does not ask twice for one position.
func (w *Worker) askCut(ctx context.Context) error {
	if w.cutAck != nil {
		// The last request is not waited for (the server may be busy with
		// a flood of events); a failed one may be asked again.
		select {
		case <-w.cutAck.Ok():
		case <-w.cutAck.Err():
			w.cutAsked = 0
		default:
			return nil
		}
		w.cutAck = nil
	}
	seq := w.a.Seq()
	if seq == w.cut || (w.cutAsked > 0 && w.cutAsked >= w.cut) {
		return nil
	}
	idle := w.pending == 0 && time.Since(w.lastRead) >= w.cfg.Idle
	late := w.cfg.MaxDelay > 0 && time.Since(w.batchFirst) >= w.cfg.MaxDelay
	if !idle && !late {
		return nil
	}
	msg := nats.NewMsg(w.cfg.Subject)
	msg.Header.Set(ControlHeader, "cut")
	ack, err := w.js.PublishMsgAsync(msg, jetstream.WithMsgID(fmt.Sprintf("%s/cut-after/%d", w.cfg.Deployment, seq)))
	if err != nil {
		return nil // asked again at a later tick
	}
	w.cutAsked, w.cutAck = seq, ack
	return ctx.Err()
}

// finalCut, for a single shard stopping, makes what it has read a cut
// (there is no other shard that must cut at the same place), so that a
// clean stop loses no applied event. With several shards the last
// complete cut stands; what was read after it is read again on restart.
func (w *Worker) finalCut(shufCh <-chan inMsg) error {
	if w.cfg.Shards != 1 || w.a.Seq() == w.cut {
		return nil
	}
	ctx, cancel := context.WithTimeout(context.Background(), 10*time.Second)
	defer cancel()
	return w.endBatch(ctx, w.a.Seq(), time.Now(), shufCh)
}

// endBatch sends this shard's summed changes of the batch ending at end to
// every owner, waits for every origin's changes for this shard's nodes,
// applies them and commits the cut.
func (w *Worker) endBatch(ctx context.Context, end uint64, readAt time.Time, shufCh <-chan inMsg) error {
	nodes := uint64(w.a.dict.Len())
	if err := w.send(ctx, end, nodes); err != nil {
		return err
	}
	w.out.done()
	o := w.observer()
	if o != nil {
		o.Batch(time.Since(w.batchFirst))
	}
	for !w.complete(end) {
		select {
		case m := <-shufCh:
			w.receive(m)
		case q := <-w.nbrReq:
			q.reply <- w.neighbors(q)
		case <-ctx.Done():
			return ctx.Err()
		}
	}
	// Changes are summed over all origins before any is applied: one
	// origin's part of a batch may take a count below zero that another
	// origin's part raises again; only the whole batch's sum is a change
	// between two true states.
	for origin, in := range w.inbox[end] {
		for _, m := range in.parts {
			if m.nodes != nodes {
				return fmt.Errorf("batch %d: shard %d knew %d nodes at the batch end, this shard %d: the shards disagree on the log", end, origin, m.nodes, nodes)
			}
			for _, c := range m.changes {
				if int(c.node) >= int(nodes) || c.orbit >= w.merged.orbits {
					return fmt.Errorf("batch %d from shard %d: change of node %d orbit %d out of range", end, origin, c.node, c.orbit)
				}
				if w.merged.add(c.node, c.orbit, c.d) {
					w.mergedX = append(w.mergedX, c.node)
				}
			}
		}
		w.origins[origin] = end
	}
	for _, x := range w.mergedX {
		row := w.merged.row(x)
		for o, d := range row {
			if d == 0 {
				continue
			}
			if err := w.a.AddDelta(x, o, d); err != nil {
				return fmt.Errorf("batch %d: %w", end, err)
			}
		}
		clear(row)
	}
	w.mergedX = w.mergedX[:0]
	w.merged.next()
	delete(w.inbox, end)
	w.cut = end
	if err := w.commit(); err != nil {
		return err
	}
	if o != nil {
		o.Cut(time.Since(readAt))
	}
	return nil
}

// send publishes this shard's message of batch end to every owner: all
// parts at once, then waits for their acks; one that fails is sent again
// until the server takes it (its id makes a second copy a duplicate).
func (w *Worker) send(ctx context.Context, end, nodes uint64) error {
	type out struct {
		msg *nats.Msg
		id  string
		fut jetstream.PubAckFuture
	}
	// Parts keep well under the server's maximum payload: a change is at
	// most 20 bytes past the limit, the header under 64.
	limit := max(int(w.cfg.Conn.MaxPayload())-4096, 1024)
	if w.partLimit > 0 {
		limit = w.partLimit
	}
	var outs []out
	for owner := range w.cfg.Shards {
		for part, data := range w.out.encode(w.cfg.Shard, owner, end, nodes, limit) {
			o := out{msg: &nats.Msg{Subject: shuffleSubject(&w.cfg, owner), Data: data}, id: shuffleID(w.cfg.Deployment, end, w.cfg.Shard, owner, part)}
			o.fut, _ = w.js.PublishMsgAsync(o.msg, jetstream.WithMsgID(o.id))
			outs = append(outs, o)
		}
	}
	for _, o := range outs {
		if o.fut != nil {
			select {
			case <-o.fut.Ok():
				continue
			case <-o.fut.Err():
			case <-ctx.Done():
				return ctx.Err()
			}
		}
		if err := publishRetry(ctx, w.js, o.msg, o.id); err != nil {
			return err
		}
	}
	return nil
}

// arrived holds the parts of one origin's message of one batch.
type arrived struct {
	parts []*shuffleMsg // by part number; nil where not yet in
	last  int           // the last part's number, -1 until it is in
}

// complete reports whether every origin's message of batch end is in,
// all its parts.
func (w *Worker) complete(end uint64) bool {
	slots := w.inbox[end]
	if slots == nil {
		return false
	}
	for _, in := range slots {
		if in == nil || in.last < 0 || len(in.parts) != in.last+1 {
			return false
		}
		for _, m := range in.parts {
			if m == nil {
				return false
			}
		}
	}
	return true
}

// receive files one shuffle message by batch, origin and part. A message
// for a batch already applied from its origin, or a second one for the
// same part, is a resend and is dropped; so is one that does not decode or
// is not for this shard (after a note to Logf).
func (w *Worker) receive(m inMsg) {
	w.shufNxt = m.seq + 1
	sm, err := decodeShuffle(m.data)
	if err == nil && (sm.owner != w.cfg.Shard || sm.origin >= w.cfg.Shards || sm.part > 1<<20) {
		err = fmt.Errorf("message from shard %d for shard %d, part %d", sm.origin, sm.owner, sm.part)
	}
	if err != nil {
		if w.cfg.Logf != nil {
			w.cfg.Logf("shuffle seq %d dropped: %v", m.seq, err)
		}
		return
	}
	if sm.batch <= w.origins[sm.origin] {
		return
	}
	slots := w.inbox[sm.batch]
	if slots == nil {
		slots = make([]*arrived, w.cfg.Shards)
		w.inbox[sm.batch] = slots
	}
	in := slots[sm.origin]
	if in == nil {
		in = &arrived{last: -1}
		slots[sm.origin] = in
	}
	if sm.part < len(in.parts) && in.parts[sm.part] != nil {
		return
	}
	for len(in.parts) <= sm.part {
		in.parts = append(in.parts, nil)
	}
	sm.streamSeq = m.seq
	in.parts[sm.part] = &sm
	if sm.last {
		in.last = sm.part
	}
}

// commit writes the cut: the applier's changes since the last cut and the
// worker record, in one checkpoint.
func (w *Worker) commit() error {
	next := w.shufNxt
	for _, slots := range w.inbox {
		for _, in := range slots {
			if in == nil {
				continue
			}
			for _, m := range in.parts {
				if m != nil {
					next = min(next, m.streamSeq)
				}
			}
		}
	}
	st := w.stats()
	rec, err := json.Marshal(workerRecord{Shard: w.cfg.Shard, Shards: w.cfg.Shards, Batch: w.cfg.Batch, Cut: w.cut, Origins: w.origins, ShuffleNext: next,
		Applied: st.Applied, Expired: st.Expired, Rejected: st.Rejected})
	if err != nil {
		return err
	}
	w.blobs[workerBlob] = rec
	alerts, err := w.evaluate()
	if err != nil {
		return err
	}
	if err := w.cfg.Store.Commit(w.a.Checkpoint(w.blobs)); err != nil {
		return fmt.Errorf("cut %d: %w", w.cut, err)
	}
	w.a.ResetTouched()
	w.snapshot()
	w.announce(alerts)
	return nil
}

// evaluate runs the alert stage on the cut about to be committed, stores
// its alerts at the cut's version and puts the evaluator's state among the
// checkpoint's blobs.
func (w *Worker) evaluate() ([]alert.Alert, error) {
	if w.alerts == nil {
		return nil, nil
	}
	owned := func(x uint32) bool { return w.ownerOf(x) == w.cfg.Shard }
	alerts, err := w.alerts.Evaluate(w.cfg.Store, w.a, owned, alertCut(w.a, w.cut, time.Now()))
	if err != nil {
		return nil, fmt.Errorf("cut %d: %w", w.cut, err)
	}
	if len(alerts) > 0 {
		if err := w.cfg.Store.PutAlerts(w.cut, alert.Records(alerts)); err != nil {
			return nil, fmt.Errorf("cut %d: alerts: %w", w.cut, err)
		}
	}
	state, err := w.cfg.Alerts.MarshalBinary()
	if err != nil {
		return nil, fmt.Errorf("cut %d: alert state: %w", w.cut, err)
	}
	w.blobs[alertsBlob] = state
	return alerts, nil
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

// snapshot records the cut-time status fields.
func (w *Worker) snapshot() {
	st := w.stats()
	w.mu.Lock()
	defer w.mu.Unlock()
	w.snap = Status{Shard: w.cfg.Shard, Shards: w.cfg.Shards, CutSeq: w.cut,
		Applied: st.Applied, Expired: st.Expired, Rejected: st.Rejected,
		Watermark: w.a.Watermark(), StartedAt: w.started}
	if w.cut > 0 {
		w.snap.CutAt = time.Now()
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
	w.mu.Lock()
	st := w.snap
	st.Rejected = make(map[string]uint64, len(w.snap.Rejected))
	for k, n := range w.snap.Rejected {
		st.Rejected[k] = n
	}
	w.mu.Unlock()
	st.AppliedSeq = w.appliedSeq.Load()
	st.StreamLastSeq = max(w.streamLast.Load(), st.AppliedSeq)
	st.Lag = st.StreamLastSeq - min(st.CutSeq, st.StreamLastSeq)
	st.Ready = st.CutSeq >= w.startLast.Load()
	return st
}

var _ View = (*Worker)(nil)
