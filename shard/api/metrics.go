package api

import (
	"bufio"
	"io"
	"math"
	"slices"
	"strconv"
	"strings"
	"sync"
	"sync/atomic"
	"time"

	"orbitwatch/shard"
	"orbitwatch/shard/alert"
)

// MetricsContentType is the media type of the Prometheus text exposition
// format, version 0.0.4, that Metrics.WriteTo writes.
const MetricsContentType = "text/plain; version=0.0.4; charset=utf-8"

// MaxRejectReasons bounds the distinct reason labels of the reject
// counter. Reasons are short fixed phrases in practice; should a caller pass
// free text, the reasons beyond the bound are counted under "other" so that
// the series count stays bounded.
const MaxRejectReasons = 32

// otherReason is the label of rejects beyond MaxRejectReasons.
const otherReason = "other"

// LatencyBuckets are the upper bounds, in seconds, of the batch and cut
// latency histograms: 1 ms to 30 s, roughly ×2.5 per step.
var LatencyBuckets = []float64{0.001, 0.0025, 0.005, 0.01, 0.025, 0.05, 0.1, 0.25, 0.5, 1, 2.5, 5, 10, 30}

// Metrics are one worker's counters for the /metrics page. The worker
// reports cut timings through the shard.Observer methods Batch and Cut (a
// short bucket search and a few atomic adds, no allocation); event counts,
// positions, lag and readiness come from its shard.Status (SyncStatus), the
// alert webhook's counts from its Stats (SyncWebhook).
// WriteTo may run concurrently with the updates. The zero value is not
// usable: call NewMetrics. No metric carries a node id.
type Metrics struct {
	applied, expired, checkpoints atomic.Uint64
	appliedSeq, cutSeq, lag       atomic.Uint64
	committedSeq                  atomic.Uint64
	ready                         atomic.Bool
	// commitRetries counts commits the store refused for want of space
	// and the worker tried again; stalled is set while it waits one out.
	commitRetries atomic.Uint64
	stalled       atomic.Bool

	// The webhook's totals: alerts delivered, failed (out of tries or
	// refused) and dropped (queue full, or unsent at exit); tries after
	// the first; alerts waiting now.
	hookDelivered, hookFailed, hookDropped, hookRetries, hookWaiting atomic.Uint64

	// rejects maps a reason to its counter. Reads go through the atomic
	// pointer without locking; a new reason copies the map under mu.
	rejects atomic.Pointer[map[string]*atomic.Uint64]
	mu      sync.Mutex

	batch, cut *Histogram
}

// NewMetrics returns zeroed metrics with empty latency histograms over
// LatencyBuckets.
func NewMetrics() *Metrics {
	m := &Metrics{batch: NewHistogram(LatencyBuckets), cut: NewHistogram(LatencyBuckets)}
	empty := map[string]*atomic.Uint64{}
	m.rejects.Store(&empty)
	return m
}

var _ shard.Observer = (*Metrics)(nil)

// Batch records the time from reading the log message that ended a cut to
// the cut being taken: scored and queued for the store (shard.Observer).
func (m *Metrics) Batch(d time.Duration) { m.batch.Observe(d) }

// Cut records the time from reading the log message that ended a cut to
// the cut being durable, and counts the commit that made it so (one commit
// may hold several cuts; shard.Observer).
func (m *Metrics) Cut(d time.Duration) {
	m.cut.Observe(d)
	m.checkpoints.Add(1)
}

// SyncStatus sets the progress gauges and the event counters from a
// worker's shard.Status, whose counts are totals since the log's start. The
// API calls it at every scrape, so the worker keeps its counts in one place
// (its Status) and reports only timings here (as shard.Observer).
func (m *Metrics) SyncStatus(s shard.Status) {
	m.applied.Store(s.Applied)
	m.expired.Store(s.Expired)
	m.appliedSeq.Store(s.AppliedSeq)
	m.cutSeq.Store(s.CutSeq)
	m.committedSeq.Store(s.CommittedSeq)
	m.lag.Store(s.Lag)
	m.ready.Store(s.Ready)
	m.commitRetries.Store(s.CommitRetries)
	m.stalled.Store(s.Stalled != "")
	if len(s.Rejected) == 0 {
		return
	}
	// Several reasons may fold into "other": sum per counter, then store.
	sums := make(map[*atomic.Uint64]uint64, len(s.Rejected))
	for reason, n := range s.Rejected {
		c, ok := (*m.rejects.Load())[reason]
		if !ok {
			c = m.rejectCounter(reason)
		}
		sums[c] += n
	}
	for c, n := range sums {
		c.Store(n)
	}
}

// SyncWebhook sets the webhook counters from its Stats (totals since it
// started). The API calls it at every scrape when it has a webhook.
func (m *Metrics) SyncWebhook(s alert.WebhookStats) {
	m.hookDelivered.Store(s.Delivered)
	m.hookFailed.Store(s.Failed)
	m.hookDropped.Store(s.Dropped)
	m.hookRetries.Store(s.Retries)
	m.hookWaiting.Store(uint64(max(s.Waiting, 0)))
}

// rejectCounter returns the counter of reason, adding it, or the "other"
// counter once MaxRejectReasons labels exist.
func (m *Metrics) rejectCounter(reason string) *atomic.Uint64 {
	m.mu.Lock()
	defer m.mu.Unlock()
	old := *m.rejects.Load()
	if c, ok := old[reason]; ok {
		return c
	}
	if len(old) >= MaxRejectReasons-1 && reason != otherReason {
		if c, ok := old[otherReason]; ok {
			return c
		}
		reason = otherReason
	}
	next := make(map[string]*atomic.Uint64, len(old)+1)
	for k, v := range old {
		next[k] = v
	}
	c := new(atomic.Uint64)
	next[reason] = c
	m.rejects.Store(&next)
	return c
}

// Histogram counts durations in fixed buckets. Observe is a short bucket
// search and two atomic adds.
type Histogram struct {
	bounds []float64       // upper bounds in seconds, increasing
	counts []atomic.Uint64 // counts[i]: observations in (bounds[i-1], bounds[i]]; the last one above every bound
	sumNs  atomic.Uint64
}

// NewHistogram returns an empty histogram with the given upper bounds (in
// seconds). The bounds must be finite, positive and strictly increasing.
func NewHistogram(bounds []float64) *Histogram {
	for i, b := range bounds {
		if !(b > 0) || math.IsInf(b, 0) || (i > 0 && b <= bounds[i-1]) {
			panic("api: histogram bounds must be finite, positive and strictly increasing")
		}
	}
	return &Histogram{bounds: slices.Clone(bounds), counts: make([]atomic.Uint64, len(bounds)+1)}
}

// Observe records one duration; a negative one counts as zero.
func (h *Histogram) Observe(d time.Duration) {
	if d < 0 {
		d = 0
	}
	s := d.Seconds()
	i := 0
	for i < len(h.bounds) && s > h.bounds[i] {
		i++
	}
	h.counts[i].Add(1)
	h.sumNs.Add(uint64(d))
}

// snapshot returns the cumulative bucket counts (the last is the total) and
// the sum in seconds.
func (h *Histogram) snapshot() ([]uint64, float64) {
	cum := make([]uint64, len(h.counts))
	var run uint64
	for i := range h.counts {
		run += h.counts[i].Load()
		cum[i] = run
	}
	return cum, float64(h.sumNs.Load()) / 1e9
}

// WriteTo writes every metric in the Prometheus text exposition format
// 0.0.4: a HELP and a TYPE line per metric family, then its samples;
// histogram buckets are cumulative and end with le="+Inf", which equals
// _count.
func (m *Metrics) WriteTo(w io.Writer) (int64, error) {
	cw := &countWriter{w: w}
	b := bufio.NewWriter(cw)
	family(b, "orbitwatch_events_applied_total", "counter", "Events accepted by the applier.")
	sample(b, "orbitwatch_events_applied_total", "", m.applied.Load())
	family(b, "orbitwatch_events_expired_total", "counter", "Removes made by the window when an add aged out.")
	sample(b, "orbitwatch_events_expired_total", "", m.expired.Load())
	family(b, "orbitwatch_events_rejected_total", "counter", "Events and bus messages rejected, by reason.")
	rejects := *m.rejects.Load()
	reasons := make([]string, 0, len(rejects))
	for r := range rejects {
		reasons = append(reasons, r)
	}
	slices.Sort(reasons)
	for _, r := range reasons {
		sample(b, "orbitwatch_events_rejected_total", `reason="`+escapeLabel(r)+`"`, rejects[r].Load())
	}
	family(b, "orbitwatch_checkpoints_total", "counter", "Commits of cuts to the store (one commit may hold several cuts).")
	sample(b, "orbitwatch_checkpoints_total", "", m.checkpoints.Load())
	family(b, "orbitwatch_applied_seq", "gauge", "Last log position applied.")
	sample(b, "orbitwatch_applied_seq", "", m.appliedSeq.Load())
	family(b, "orbitwatch_cut_seq", "gauge", "Last cut taken (log position).")
	sample(b, "orbitwatch_cut_seq", "", m.cutSeq.Load())
	family(b, "orbitwatch_committed_seq", "gauge", "Last cut durable in the store (log position): as-of reads and alerts reach it.")
	sample(b, "orbitwatch_committed_seq", "", m.committedSeq.Load())
	family(b, "orbitwatch_lag_events", "gauge", "Log positions between the last applied and the end of the log.")
	sample(b, "orbitwatch_lag_events", "", m.lag.Load())
	family(b, "orbitwatch_ready", "gauge", "1 once the worker has applied the log up to where it stood when the worker started and its cuts become durable, else 0.")
	sample(b, "orbitwatch_ready", "", bit(m.ready.Load()))
	family(b, "orbitwatch_commit_retries_total", "counter", "Commits of cuts the store refused for want of free space (nothing written) and the worker tried again.")
	sample(b, "orbitwatch_commit_retries_total", "", m.commitRetries.Load())
	family(b, "orbitwatch_commit_stalled", "gauge", "1 while the store refuses the worker's commits for want of free space (the worker waits and tries again), else 0.")
	sample(b, "orbitwatch_commit_stalled", "", bit(m.stalled.Load()))
	family(b, "orbitwatch_webhook_alerts_total", "counter", "Alerts handed to the webhook, by outcome: delivered (a 2xx answer), failed (out of tries or refused), dropped (queue full, or unsent at exit).")
	sample(b, "orbitwatch_webhook_alerts_total", `outcome="delivered"`, m.hookDelivered.Load())
	sample(b, "orbitwatch_webhook_alerts_total", `outcome="dropped"`, m.hookDropped.Load())
	sample(b, "orbitwatch_webhook_alerts_total", `outcome="failed"`, m.hookFailed.Load())
	family(b, "orbitwatch_webhook_retries_total", "counter", "Webhook tries after the first try of an alert.")
	sample(b, "orbitwatch_webhook_retries_total", "", m.hookRetries.Load())
	family(b, "orbitwatch_webhook_queue_alerts", "gauge", "Alerts waiting to be sent to the webhook.")
	sample(b, "orbitwatch_webhook_queue_alerts", "", m.hookWaiting.Load())
	histogram(b, "orbitwatch_batch_seconds", "Time from reading the log message that ends a cut to the cut being taken (scored and queued for the store).", m.batch)
	histogram(b, "orbitwatch_cut_seconds", "Time from reading the log message that ends a cut to the cut being durable in the store.", m.cut)
	err := b.Flush()
	return cw.n, err
}

func bit(b bool) uint64 {
	if b {
		return 1
	}
	return 0
}

func family(b *bufio.Writer, name, typ, help string) {
	b.WriteString("# HELP " + name + " " + help + "\n# TYPE " + name + " " + typ + "\n")
}

func sample(b *bufio.Writer, name, labels string, v uint64) {
	b.WriteString(name)
	if labels != "" {
		b.WriteString("{" + labels + "}")
	}
	b.WriteByte(' ')
	b.WriteString(strconv.FormatUint(v, 10))
	b.WriteByte('\n')
}

func histogram(b *bufio.Writer, name, help string, h *Histogram) {
	family(b, name, "histogram", help)
	cum, sum := h.snapshot()
	for i, bound := range h.bounds {
		sample(b, name+"_bucket", `le="`+strconv.FormatFloat(bound, 'g', -1, 64)+`"`, cum[i])
	}
	total := cum[len(cum)-1]
	sample(b, name+"_bucket", `le="+Inf"`, total)
	b.WriteString(name + "_sum " + strconv.FormatFloat(sum, 'g', -1, 64) + "\n")
	sample(b, name+"_count", "", total)
}

// labelEscaper escapes a label value as the text format requires:
// backslash, double quote and line feed.
var labelEscaper = strings.NewReplacer(`\`, `\\`, `"`, `\"`, "\n", `\n`)

// escapeLabel returns s as a label value: valid UTF-8 (the format requires
// it; bad bytes become U+FFFD) with the escapes of labelEscaper.
func escapeLabel(s string) string { return labelEscaper.Replace(strings.ToValidUTF8(s, "\uFFFD")) }

type countWriter struct {
	w io.Writer
	n int64
}

func (c *countWriter) Write(p []byte) (int, error) {
	n, err := c.w.Write(p)
	c.n += int64(n)
	return n, err
}
