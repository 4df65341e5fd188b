package alert

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"log/slog"
	"math/rand/v2"
	"net/http"
	"net/url"
	"sync"
	"sync/atomic"
	"time"
)

// WebhookConfig says where and how persistently to POST alerts.
type WebhookConfig struct {
	// URL receives one POST per alert, body the alert's JSON, with the
	// header AlertIDHeader set to its id (receivers de-duplicate on it:
	// a retry after a lost answer sends the alert again).
	URL string
	// Queue bounds the alerts waiting to be sent; when it is full the
	// oldest waiting alert is dropped (counted). Default 1024.
	Queue int
	// Attempts bounds the tries per alert (default 5); Deadline bounds the
	// time spent on one alert, back-off included (default 30 s); Timeout
	// bounds one request (default 5 s).
	Attempts          int
	Deadline, Timeout time.Duration
	// Backoff is the wait before the first retry (default 250 ms),
	// doubled after each failed try up to MaxBackoff (default 8 s); each
	// wait is drawn uniformly from [w/2, w) (jitter), so that many shards
	// failing at once do not retry in step.
	Backoff, MaxBackoff time.Duration
	// Client sends the requests; nil means a client with Timeout.
	Client *http.Client
	// Logger hears of drops and failures; nil means slog.Default().
	Logger *slog.Logger
}

// AlertIDHeader carries the alert id on webhook requests.
const AlertIDHeader = "Orbitwatch-Alert-Id"

// WebhookStats are a webhook's counters, totals since it started.
type WebhookStats struct {
	// Queued alerts were accepted by Send; Delivered got a 2xx answer;
	// Failed ran out of attempts or time or got a permanent refusal (a 4xx
	// other than 408 and 429); Dropped were pushed out of a full queue or
	// left unsent at Close; Retries counts tries after the first.
	Queued, Delivered, Failed, Dropped, Retries uint64
	// Waiting is the queue's length now.
	Waiting int
}

// Webhook delivers alerts to one URL from its own goroutine. Send never
// blocks on the network: a slow or failing receiver only fills the bounded
// queue, whose oldest alerts are then dropped and counted.
type Webhook struct {
	cfg    WebhookConfig
	shown  string // the URL as logs and errors show it (RedactURL)
	log    *slog.Logger
	wake   chan struct{}
	done   chan struct{}
	ctx    context.Context
	cancel context.CancelFunc

	mu     sync.Mutex
	queue  [][]byte // JSON bodies, oldest first, as a ring
	ids    []string
	head   int
	n      int
	closed bool

	queued, delivered, failed, dropped, retries atomic.Uint64
}

// NewWebhook validates cfg and starts the delivery goroutine; Close stops
// it.
func NewWebhook(cfg WebhookConfig) (*Webhook, error) {
	u, err := url.Parse(cfg.URL)
	if err != nil || (u.Scheme != "http" && u.Scheme != "https") || u.Host == "" {
		return nil, fmt.Errorf("alert: webhook URL %s is not an http or https URL", RedactURL(cfg.URL))
	}
	def := func(d *time.Duration, v time.Duration) {
		if *d <= 0 {
			*d = v
		}
	}
	def(&cfg.Deadline, 30*time.Second)
	def(&cfg.Timeout, 5*time.Second)
	def(&cfg.Backoff, 250*time.Millisecond)
	def(&cfg.MaxBackoff, 8*time.Second)
	if cfg.Queue <= 0 {
		cfg.Queue = 1024
	}
	if cfg.Attempts <= 0 {
		cfg.Attempts = 5
	}
	if cfg.Client == nil {
		cfg.Client = &http.Client{Timeout: cfg.Timeout}
	}
	w := &Webhook{
		cfg: cfg, shown: RedactURL(cfg.URL), log: cfg.Logger,
		wake: make(chan struct{}, 1), done: make(chan struct{}),
		queue: make([][]byte, cfg.Queue), ids: make([]string, cfg.Queue),
	}
	if w.log == nil {
		w.log = slog.Default()
	}
	w.ctx, w.cancel = context.WithCancel(context.Background())
	go w.run()
	return w, nil
}

// Send queues alerts for delivery and returns at once. When the queue is
// full the oldest waiting alert is dropped to make room. Send after Close
// drops the alerts (counted).
func (w *Webhook) Send(alerts ...Alert) {
	for i := range alerts {
		body, err := json.Marshal(&alerts[i])
		if err != nil {
			panic("alert: an alert does not marshal to JSON: " + err.Error())
		}
		w.push(alerts[i].ID, body)
	}
	select {
	case w.wake <- struct{}{}:
	default:
	}
}

func (w *Webhook) push(id string, body []byte) {
	w.mu.Lock()
	defer w.mu.Unlock()
	if w.closed {
		w.dropped.Add(1)
		return
	}
	w.queued.Add(1)
	if w.n == len(w.queue) {
		old := w.ids[w.head]
		w.head = (w.head + 1) % len(w.queue)
		w.n--
		if d := w.dropped.Add(1); d == 1 || d%1000 == 0 {
			w.log.Warn("alert webhook queue full: dropping the oldest alert", "url", w.shown, "alert", old, "dropped_total", d)
		}
	}
	i := (w.head + w.n) % len(w.queue)
	w.queue[i], w.ids[i] = body, id
	w.n++
}

func (w *Webhook) pop() (id string, body []byte, ok bool) {
	w.mu.Lock()
	defer w.mu.Unlock()
	if w.n == 0 {
		return "", nil, false
	}
	id, body = w.ids[w.head], w.queue[w.head]
	w.queue[w.head], w.ids[w.head] = nil, ""
	w.head = (w.head + 1) % len(w.queue)
	w.n--
	return id, body, true
}

// Stats returns the counters.
func (w *Webhook) Stats() WebhookStats {
	w.mu.Lock()
	n := w.n
	w.mu.Unlock()
	return WebhookStats{
		Queued: w.queued.Load(), Delivered: w.delivered.Load(), Failed: w.failed.Load(),
		Dropped: w.dropped.Load(), Retries: w.retries.Load(), Waiting: n,
	}
}

// Close stops accepting alerts and waits until the queue is delivered or
// ctx ends; then the alert in flight is abandoned and the rest are counted
// as dropped.
func (w *Webhook) Close(ctx context.Context) error {
	w.mu.Lock()
	w.closed = true
	w.mu.Unlock()
	select {
	case w.wake <- struct{}{}:
	default:
	}
	select {
	case <-w.done:
		return nil
	case <-ctx.Done():
		w.cancel()
		<-w.done
		return ctx.Err()
	}
}

func (w *Webhook) run() {
	defer close(w.done)
	defer w.cancel()
	for {
		id, body, ok := w.pop()
		if !ok {
			w.mu.Lock()
			closed := w.closed
			w.mu.Unlock()
			if closed {
				return
			}
			<-w.wake
			continue
		}
		if w.ctx.Err() != nil {
			w.dropped.Add(1)
			continue
		}
		if err := w.deliver(id, body); err != nil {
			w.failed.Add(1)
			w.log.Warn("alert webhook delivery failed", "url", w.shown, "alert", id, "err", err)
		} else {
			w.delivered.Add(1)
		}
	}
}

// deliver POSTs one alert, retrying with jittered exponential back-off
// until a 2xx answer, a permanent refusal, Attempts tries or Deadline.
func (w *Webhook) deliver(id string, body []byte) error {
	ctx, cancel := context.WithTimeout(w.ctx, w.cfg.Deadline)
	defer cancel()
	wait := w.cfg.Backoff
	var err error
	for try := 1; ; try++ {
		var retry bool
		if retry, err = w.post(ctx, id, body); err == nil {
			return nil
		}
		if !retry || try == w.cfg.Attempts {
			return fmt.Errorf("try %d of %d: %w", try, w.cfg.Attempts, err)
		}
		d := wait/2 + rand.N(wait/2+1)
		wait = min(2*wait, w.cfg.MaxBackoff)
		t := time.NewTimer(d)
		select {
		case <-ctx.Done():
			t.Stop()
			return fmt.Errorf("try %d: %w (last: %v)", try, ctx.Err(), err)
		case <-t.C:
		}
		w.retries.Add(1)
	}
}

// post sends one try; retry says whether a failure may succeed later.
func (w *Webhook) post(ctx context.Context, id string, body []byte) (retry bool, err error) {
	rctx, cancel := context.WithTimeout(ctx, w.cfg.Timeout)
	defer cancel()
	req, err := http.NewRequestWithContext(rctx, http.MethodPost, w.cfg.URL, bytes.NewReader(body))
	if err != nil {
		return false, redactError(err)
	}
	req.Header.Set("Content-Type", "application/json")
	req.Header.Set(AlertIDHeader, id)
	resp, err := w.cfg.Client.Do(req)
	if err != nil {
		return !errors.Is(ctx.Err(), context.Canceled), redactError(err)
	}
	io.Copy(io.Discard, io.LimitReader(resp.Body, 64<<10))
	resp.Body.Close()
	switch {
	case resp.StatusCode >= 200 && resp.StatusCode < 300:
		return false, nil
	case resp.StatusCode == http.StatusRequestTimeout, resp.StatusCode == http.StatusTooManyRequests, resp.StatusCode >= 500:
		return true, fmt.Errorf("answer %s", resp.Status)
	}
	return false, fmt.Errorf("refused with %s", resp.Status)
}

// RedactURL returns u as logs and error messages may show it: scheme and
// host only, with "/…" standing for a path, query or fragment and the
// user information dropped, since webhook receivers commonly carry their
// secret in any of those ("https://hooks.example/services/T0/B0/secret"
// becomes "https://hooks.example/…"). A URL that does not parse is shown
// as "(a URL that does not parse)".
func RedactURL(u string) string {
	p, err := url.Parse(u)
	if err != nil || p.Opaque != "" {
		return "(a URL that does not parse)"
	}
	out := p.Scheme + "://" + p.Host
	if (p.Path != "" && p.Path != "/") || p.RawQuery != "" || p.Fragment != "" || p.ForceQuery {
		out += "/…"
	}
	return out
}

// redactError returns err with the URL of a *url.Error (which the HTTP
// client wraps around every failure, naming the request's URL or a
// redirect's) redacted.
func redactError(err error) error {
	var ue *url.Error
	if !errors.As(err, &ue) {
		return err
	}
	return &url.Error{Op: ue.Op, URL: RedactURL(ue.URL), Err: ue.Err}
}
