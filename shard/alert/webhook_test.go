package alert_test

import (
	"context"
	"encoding/json"
	"fmt"
	"io"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"reflect"
	"strings"
	"sync"
	"testing"
	"time"

	"orbitwatch/shard/alert"
)

// receiver is a local webhook endpoint that answers 503 to the first
// failures tries of every alert id, and blocks every request while gate is
// not closed.
type receiver struct {
	mu        sync.Mutex
	tries     map[string]int
	delivered []alert.Alert
	failures  int
	gate      chan struct{}
	entered   chan string // one send per request, before it blocks
}

func (r *receiver) ServeHTTP(w http.ResponseWriter, req *http.Request) {
	body, _ := io.ReadAll(req.Body)
	id := req.Header.Get(alert.AlertIDHeader)
	select {
	case r.entered <- id:
	default:
	}
	<-r.gate
	var a alert.Alert
	if err := json.Unmarshal(body, &a); err != nil || a.ID != id || req.Method != http.MethodPost || req.Header.Get("Content-Type") != "application/json" {
		http.Error(w, "bad alert", http.StatusBadRequest)
		return
	}
	r.mu.Lock()
	defer r.mu.Unlock()
	r.tries[id]++
	if r.tries[id] <= r.failures {
		http.Error(w, "not now", http.StatusServiceUnavailable)
		return
	}
	r.delivered = append(r.delivered, a)
}

func newReceiver(failures int) (*receiver, *httptest.Server) {
	r := &receiver{tries: map[string]int{}, failures: failures, gate: make(chan struct{}), entered: make(chan string, 1)}
	return r, httptest.NewServer(r)
}

func quietLogger() *slog.Logger { return slog.New(slog.NewTextHandler(io.Discard, nil)) }

func testAlert(i int) alert.Alert {
	node := fmt.Sprintf("acct-%d", i)
	return alert.Alert{ID: alert.AlertID("ring", node, uint64(i)), Rule: "ring", Kind: "orbit-count", Node: node, Seq: uint64(i), EventTime: t0, Score: 5, Fire: 3, Baseline: "none"}
}

func waitFor(t *testing.T, what string, cond func() bool) {
	t.Helper()
	deadline := time.Now().Add(20 * time.Second)
	for !cond() {
		if time.Now().After(deadline) {
			t.Fatalf("timed out waiting for %s", what)
		}
		time.Sleep(5 * time.Millisecond)
	}
}

// TestWebhookRetriesWhileEvaluationGoesOn stalls the receiver, keeps
// evaluating cuts and handing their alerts to the webhook meanwhile (the
// loop finishing at all shows Send did not wait for the stalled server),
// then lets it answer 503 twice per alert before accepting: every alert
// arrives once, after two retries each.
func TestWebhookRetriesWhileEvaluationGoesOn(t *testing.T) {
	rc, srv := newReceiver(2)
	defer srv.Close()
	wh, err := alert.NewWebhook(alert.WebhookConfig{URL: srv.URL, Backoff: time.Millisecond, MaxBackoff: 4 * time.Millisecond, Logger: quietLogger()})
	if err != nil {
		t.Fatal(err)
	}
	cat := undirected4(t)
	ev := alert.New(configOf(ringRule(0)), cat)
	var sent []alert.Alert
	first := true
	for i := range 200 {
		// One new node per cut at 5 cycles: one alert per cut.
		got := ev.Evaluate(alert.Cut{Seq: uint64(i + 1), EventTime: t0.Add(time.Duration(i) * time.Second)},
			[]alert.NodeChange{{Node: fmt.Sprintf("acct-%d", i), Degree: 4, Now: cycleVector(5)}})
		wh.Send(got...)
		sent = append(sent, got...)
		if first {
			// The receiver now holds the first request and answers
			// nothing until the gate opens.
			<-rc.entered
			first = false
		}
	}
	if len(sent) != 200 {
		t.Fatalf("%d alerts evaluated, want 200", len(sent))
	}
	if s := wh.Stats(); s.Delivered != 0 || s.Queued != 200 || s.Waiting != 199 {
		t.Fatalf("while stalled: %+v, want nothing delivered, 200 queued, 199 waiting", s)
	}
	close(rc.gate)
	waitFor(t, "delivery", func() bool { return wh.Stats().Delivered == 200 })
	ctx, cancel := context.WithTimeout(context.Background(), 10*time.Second)
	defer cancel()
	if err := wh.Close(ctx); err != nil {
		t.Fatal(err)
	}
	s := wh.Stats()
	if s.Retries != 400 || s.Failed != 0 || s.Dropped != 0 || s.Waiting != 0 {
		t.Fatalf("stats %+v, want 400 retries and no failure or drop", s)
	}
	rc.mu.Lock()
	defer rc.mu.Unlock()
	if !reflect.DeepEqual(rc.delivered, sent) {
		t.Fatal("the receiver got other alerts, or in another order, than were sent")
	}
	for id, n := range rc.tries {
		if n != 3 {
			t.Fatalf("alert %s tried %d times, want 3", id, n)
		}
	}
}

// TestWebhookQueueDropsOldest fills a queue of 4 behind a stalled
// receiver: the one in flight and the newest four are delivered, the rest
// dropped and counted.
func TestWebhookQueueDropsOldest(t *testing.T) {
	rc, srv := newReceiver(0)
	defer srv.Close()
	wh, err := alert.NewWebhook(alert.WebhookConfig{URL: srv.URL, Queue: 4, Logger: quietLogger()})
	if err != nil {
		t.Fatal(err)
	}
	wh.Send(testAlert(0))
	<-rc.entered
	for i := 1; i < 10; i++ {
		wh.Send(testAlert(i))
	}
	if s := wh.Stats(); s.Dropped != 5 || s.Waiting != 4 || s.Queued != 10 {
		t.Fatalf("stats %+v, want 5 dropped and 4 waiting", s)
	}
	close(rc.gate)
	if err := wh.Close(context.Background()); err != nil {
		t.Fatal(err)
	}
	var got []uint64
	for _, a := range rc.delivered {
		got = append(got, a.Seq)
	}
	if want := []uint64{0, 6, 7, 8, 9}; !reflect.DeepEqual(got, want) {
		t.Fatalf("delivered %v, want %v", got, want)
	}
	wh.Send(testAlert(10))
	if s := wh.Stats(); s.Dropped != 6 || s.Delivered != 5 {
		t.Fatalf("after close: %+v, want a Send after Close counted as dropped", s)
	}
}

// TestWebhookGivesUp checks the bounds: a receiver that always fails is
// tried Attempts times; a permanent refusal is not retried; a Close whose
// context ends abandons the rest.
func TestWebhookGivesUp(t *testing.T) {
	var mu sync.Mutex
	hits := map[string]int{}
	srv := httptest.NewServer(http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		id := r.Header.Get(alert.AlertIDHeader)
		mu.Lock()
		hits[id]++
		mu.Unlock()
		if id == testAlert(1).ID {
			http.Error(w, "no such hook", http.StatusNotFound)
			return
		}
		http.Error(w, "down", http.StatusBadGateway)
	}))
	defer srv.Close()
	wh, err := alert.NewWebhook(alert.WebhookConfig{URL: srv.URL, Attempts: 3, Backoff: time.Millisecond, Logger: quietLogger()})
	if err != nil {
		t.Fatal(err)
	}
	wh.Send(testAlert(0), testAlert(1))
	waitFor(t, "two failures", func() bool { return wh.Stats().Failed == 2 })
	mu.Lock()
	if hits[testAlert(0).ID] != 3 || hits[testAlert(1).ID] != 1 {
		t.Fatalf("tries %v, want 3 for the 502s and 1 for the 404", hits)
	}
	mu.Unlock()
	if s := wh.Stats(); s.Retries != 2 || s.Delivered != 0 {
		t.Fatalf("stats %+v", s)
	}
	if err := wh.Close(context.Background()); err != nil {
		t.Fatal(err)
	}

	// A long back-off and a Close with a short deadline: Close returns
	// when its context ends, and what was waiting is dropped.
	slow, err := alert.NewWebhook(alert.WebhookConfig{URL: srv.URL, Attempts: 100, Backoff: time.Hour, MaxBackoff: time.Hour, Deadline: time.Hour, Logger: quietLogger()})
	if err != nil {
		t.Fatal(err)
	}
	slow.Send(testAlert(2), testAlert(3), testAlert(4))
	waitFor(t, "the first try", func() bool { mu.Lock(); defer mu.Unlock(); return hits[testAlert(2).ID] == 1 })
	ctx, cancel := context.WithTimeout(context.Background(), 50*time.Millisecond)
	defer cancel()
	if err := slow.Close(ctx); err != context.DeadlineExceeded {
		t.Fatalf("Close: %v, want the context's deadline", err)
	}
	if s := slow.Stats(); s.Failed != 1 || s.Dropped != 2 || s.Waiting != 0 {
		t.Fatalf("after an abandoned close: %+v, want 1 failed (in flight) and 2 dropped", s)
	}
	if _, err := alert.NewWebhook(alert.WebhookConfig{URL: "ftp://example.invalid/x"}); err == nil {
		t.Fatal("a non-http URL was accepted")
	}
}

// TestWebhookURLRedacted sends alerts to a receiver whose URL carries a
// secret in its user information, path and query, and that refuses them
// (a permanent refusal), and to a closed port (a dial error, whose text the
// HTTP client builds around the URL): no log line and no error shows the
// secret, and the host is still named so an operator knows which hook.
func TestWebhookURLRedacted(t *testing.T) {
	const secret = "s3cr3t-token-7f2a"
	srv := httptest.NewServer(http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		http.Error(w, "no such hook", http.StatusNotFound)
	}))
	defer srv.Close()
	closed := httptest.NewServer(http.NotFoundHandler())
	closedURL := closed.URL
	closed.Close()

	var logs strings.Builder
	var mu sync.Mutex
	logger := slog.New(slog.NewTextHandler(lockedWriter{&mu, &logs}, nil))
	for _, base := range []string{srv.URL, closedURL} {
		u := strings.Replace(base, "http://", "http://user:"+secret+"@", 1) + "/hooks/" + secret + "?token=" + secret + "#" + secret
		wh, err := alert.NewWebhook(alert.WebhookConfig{URL: u, Attempts: 2, Backoff: time.Millisecond, Logger: logger})
		if err != nil {
			t.Fatal(err)
		}
		wh.Send(testAlert(0))
		waitFor(t, "a failure", func() bool { return wh.Stats().Failed == 1 })
		wh.Close(context.Background())
	}
	mu.Lock()
	out := logs.String()
	mu.Unlock()
	if strings.Contains(out, secret) {
		t.Errorf("webhook logs show the secret:\n%s", out)
	}
	for _, base := range []string{srv.URL, closedURL} {
		if !strings.Contains(out, base+"/…") {
			t.Errorf("webhook logs do not name %s/…:\n%s", base, out)
		}
	}
	if strings.Count(out, "delivery failed") != 2 {
		t.Errorf("want two delivery failures logged:\n%s", out)
	}
	if _, err := alert.NewWebhook(alert.WebhookConfig{URL: "ftp://hooks.example.invalid/" + secret}); err == nil || strings.Contains(err.Error(), secret) {
		t.Errorf("bad URL error %v shows the secret (or no error)", err)
	}
}

func TestRedactURL(t *testing.T) {
	for _, c := range []struct{ in, want string }{
		{"https://hooks.example.invalid/services/T0/B0/secret", "https://hooks.example.invalid/…"},
		{"https://hooks.example.invalid", "https://hooks.example.invalid"},
		{"https://hooks.example.invalid/", "https://hooks.example.invalid"},
		{"https://u:p@hooks.example.invalid:8443/", "https://hooks.example.invalid:8443"},
		{"http://hooks.example.invalid?key=secret", "http://hooks.example.invalid/…"},
		{"http://hooks.example.invalid/#secret", "http://hooks.example.invalid/…"},
		{"http://hooks.example.invalid/?", "http://hooks.example.invalid/…"},
		{"mailto:secret@example.invalid", "(a URL that does not parse)"},
		{"http://[::1%zz/secret", "(a URL that does not parse)"},
	} {
		if got := alert.RedactURL(c.in); got != c.want {
			t.Errorf("RedactURL(%q) = %q, want %q", c.in, got, c.want)
		}
	}
}

// lockedWriter serialises writes from the delivery goroutines.
type lockedWriter struct {
	mu *sync.Mutex
	w  io.Writer
}

func (l lockedWriter) Write(p []byte) (int, error) {
	l.mu.Lock()
	defer l.mu.Unlock()
	return l.w.Write(p)
}
