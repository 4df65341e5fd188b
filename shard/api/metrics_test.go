package api

import (
	"bufio"
	"bytes"
	"context"
	"fmt"
	"io"
	"log/slog"
	"math"
	"net/http"
	"net/http/httptest"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"

	"orbitwatch/shard"
	"orbitwatch/shard/alert"
)

// expoSample is one sample line of the text exposition format.
type expoSample struct {
	name   string
	labels map[string]string
	value  float64
}

// expoFamily is one metric family: its HELP, TYPE and samples in order.
type expoFamily struct {
	help, typ string
	samples   []expoSample
}

// parseExposition reads the Prometheus text format 0.0.4 strictly enough to
// catch what a scraper would refuse: every sample belongs to a family
// declared by a HELP and a TYPE line before it (histogram samples with the
// _bucket, _sum and _count suffixes), no family is declared twice, label
// values are quoted with the format's escapes, values parse as floats.
// The rules are those of the format's published description
// (prometheus.io, "Exposition formats", text format 0.0.4), as recalled.
func parseExposition(t *testing.T, text string) (map[string]*expoFamily, []string) {
	t.Helper()
	fams := map[string]*expoFamily{}
	var order []string
	var cur string
	sc := bufio.NewScanner(strings.NewReader(text))
	line := 0
	for sc.Scan() {
		line++
		l := sc.Text()
		switch {
		case strings.HasPrefix(l, "# HELP "):
			f := strings.SplitN(l[len("# HELP "):], " ", 2)
			if len(f) != 2 || f[1] == "" {
				t.Fatalf("line %d: HELP without text: %q", line, l)
			}
			if _, dup := fams[f[0]]; dup {
				t.Fatalf("line %d: family %s declared twice", line, f[0])
			}
			fams[f[0]] = &expoFamily{help: f[1]}
			order = append(order, f[0])
			cur = f[0]
		case strings.HasPrefix(l, "# TYPE "):
			f := strings.Fields(l[len("# TYPE "):])
			if len(f) != 2 || f[0] != cur || fams[cur].typ != "" {
				t.Fatalf("line %d: TYPE %q does not follow its HELP line", line, l)
			}
			switch f[1] {
			case "counter", "gauge", "histogram", "summary", "untyped":
			default:
				t.Fatalf("line %d: unknown type %q", line, f[1])
			}
			fams[cur].typ = f[1]
		case strings.HasPrefix(l, "#") || l == "":
			t.Fatalf("line %d: unexpected line %q", line, l)
		default:
			s := parseSample(t, line, l)
			fam := fams[cur]
			if fam == nil || fam.typ == "" {
				t.Fatalf("line %d: sample %s before any HELP/TYPE", line, s.name)
			}
			ok := s.name == cur
			if fam.typ == "histogram" {
				ok = s.name == cur+"_bucket" || s.name == cur+"_sum" || s.name == cur+"_count"
			}
			if !ok {
				t.Fatalf("line %d: sample %s inside family %s", line, s.name, cur)
			}
			fam.samples = append(fam.samples, s)
		}
	}
	if !strings.HasSuffix(text, "\n") {
		t.Fatalf("exposition does not end with a line feed")
	}
	return fams, order
}

func parseSample(t *testing.T, line int, l string) expoSample {
	t.Helper()
	s := expoSample{labels: map[string]string{}}
	i := strings.IndexAny(l, "{ ")
	if i <= 0 {
		t.Fatalf("line %d: no metric name in %q", line, l)
	}
	s.name = l[:i]
	for _, r := range s.name {
		if !(r == '_' || r == ':' || r >= 'a' && r <= 'z' || r >= 'A' && r <= 'Z' || r >= '0' && r <= '9') {
			t.Fatalf("line %d: bad metric name %q", line, s.name)
		}
	}
	rest := l[i:]
	if rest[0] == '{' {
		rest = rest[1:]
		for rest[0] != '}' {
			eq := strings.IndexByte(rest, '=')
			if eq <= 0 || len(rest) < eq+2 || rest[eq+1] != '"' {
				t.Fatalf("line %d: bad label in %q", line, l)
			}
			key := rest[:eq]
			rest = rest[eq+2:]
			var val strings.Builder
			for {
				if rest == "" {
					t.Fatalf("line %d: unterminated label value in %q", line, l)
				}
				c := rest[0]
				rest = rest[1:]
				if c == '"' {
					break
				}
				if c == '\\' {
					switch rest[0] {
					case '\\', '"':
						val.WriteByte(rest[0])
					case 'n':
						val.WriteByte('\n')
					default:
						t.Fatalf("line %d: bad escape in %q", line, l)
					}
					rest = rest[1:]
					continue
				}
				val.WriteByte(c)
			}
			s.labels[key] = val.String()
			if rest[0] == ',' {
				rest = rest[1:]
			}
		}
		rest = rest[1:]
	}
	if !strings.HasPrefix(rest, " ") {
		t.Fatalf("line %d: no space before the value in %q", line, l)
	}
	v, err := strconv.ParseFloat(rest[1:], 64)
	if err != nil {
		t.Fatalf("line %d: value: %v", line, err)
	}
	s.value = v
	return s
}

// checkHistogram checks that a histogram family's buckets have increasing
// bounds ending in +Inf, cumulative counts, and +Inf equal to _count.
func checkHistogram(t *testing.T, name string, f *expoFamily) (bounds []float64, cum []float64, sum, count float64) {
	t.Helper()
	for _, s := range f.samples {
		switch s.name {
		case name + "_bucket":
			le, err := strconv.ParseFloat(s.labels["le"], 64)
			if err != nil {
				t.Fatalf("%s: bucket le %q: %v", name, s.labels["le"], err)
			}
			if n := len(bounds); n > 0 && (le <= bounds[n-1] || s.value < cum[n-1]) {
				t.Fatalf("%s: bucket le=%v after le=%v: bounds must increase and counts be cumulative (%v after %v)", name, le, bounds[n-1], s.value, cum[n-1])
			}
			bounds, cum = append(bounds, le), append(cum, s.value)
		case name + "_sum":
			sum = s.value
		case name + "_count":
			count = s.value
		}
	}
	if len(bounds) == 0 || !math.IsInf(bounds[len(bounds)-1], 1) {
		t.Fatalf("%s: buckets do not end with le=\"+Inf\": %v", name, bounds)
	}
	if cum[len(cum)-1] != count {
		t.Fatalf("%s: +Inf bucket %v != _count %v", name, cum[len(cum)-1], count)
	}
	return bounds, cum, sum, count
}

func scrape(t *testing.T, m *Metrics) string {
	t.Helper()
	var buf bytes.Buffer
	n, err := m.WriteTo(&buf)
	if err != nil {
		t.Fatal(err)
	}
	if n != int64(buf.Len()) {
		t.Fatalf("WriteTo says %d bytes, wrote %d", n, buf.Len())
	}
	return buf.String()
}

func TestMetricsExposition(t *testing.T) {
	m := NewMetrics()
	m.SyncStatus(shard.Status{Applied: 1, Rejected: map[string]uint64{"self-loop": 1}})
	m.SyncStatus(shard.Status{
		Applied: 7, Expired: 3, AppliedSeq: 1200, CutSeq: 1024, CommittedSeq: 1000, Lag: 76, Ready: true, CommitRetries: 9,
		Rejected: map[string]uint64{"self-loop": 2, "remove of absent edge": 2, "message 7: bad \"op\"\nback\\slash": 1},
	})
	// Bucket bounds are inclusive upper bounds (le): 1 ms falls in le=0.001.
	for _, d := range []time.Duration{500 * time.Microsecond, time.Millisecond, 3 * time.Millisecond, 40 * time.Second, -time.Second} {
		m.Batch(d)
	}
	m.Cut(200 * time.Millisecond)
	m.Cut(20 * time.Second)

	fams, order := parseExposition(t, scrape(t, m))
	want := map[string]string{
		"orbitwatch_events_applied_total":  "counter",
		"orbitwatch_events_expired_total":  "counter",
		"orbitwatch_events_rejected_total": "counter",
		"orbitwatch_checkpoints_total":     "counter",
		"orbitwatch_applied_seq":           "gauge",
		"orbitwatch_cut_seq":               "gauge",
		"orbitwatch_committed_seq":         "gauge",
		"orbitwatch_webhook_alerts_total":  "counter",
		"orbitwatch_webhook_retries_total": "counter",
		"orbitwatch_webhook_queue_alerts":  "gauge",
		"orbitwatch_lag_events":            "gauge",
		"orbitwatch_ready":                 "gauge",
		"orbitwatch_commit_retries_total":  "counter",
		"orbitwatch_commit_stalled":        "gauge",
		"orbitwatch_batch_seconds":         "histogram",
		"orbitwatch_cut_seconds":           "histogram",
	}
	if len(order) != len(want) {
		t.Errorf("families %v, want %d of them", order, len(want))
	}
	for name, typ := range want {
		f := fams[name]
		if f == nil {
			t.Errorf("family %s missing", name)
			continue
		}
		if f.typ != typ {
			t.Errorf("%s: type %s, want %s", name, f.typ, typ)
		}
		if typ == "counter" && !strings.HasSuffix(name, "_total") {
			t.Errorf("counter %s does not end in _total", name)
		}
	}
	single := map[string]float64{
		"orbitwatch_events_applied_total":  7,
		"orbitwatch_events_expired_total":  3,
		"orbitwatch_checkpoints_total":     2, // one per Cut
		"orbitwatch_applied_seq":           1200,
		"orbitwatch_cut_seq":               1024,
		"orbitwatch_committed_seq":         1000,
		"orbitwatch_webhook_retries_total": 0,
		"orbitwatch_webhook_queue_alerts":  0,
		"orbitwatch_lag_events":            76,
		"orbitwatch_ready":                 1,
		"orbitwatch_commit_retries_total":  9,
		"orbitwatch_commit_stalled":        0,
	}
	for name, v := range single {
		s := fams[name].samples
		if len(s) != 1 || len(s[0].labels) != 0 || s[0].value != v {
			t.Errorf("%s: samples %+v, want one unlabelled %v", name, s, v)
		}
	}
	rejects := map[string]float64{}
	for _, s := range fams["orbitwatch_events_rejected_total"].samples {
		if len(s.labels) != 1 {
			t.Errorf("reject sample labels %v, want only reason", s.labels)
		}
		rejects[s.labels["reason"]] = s.value
	}
	wantRejects := map[string]float64{"self-loop": 2, "remove of absent edge": 2, "message 7: bad \"op\"\nback\\slash": 1}
	if fmt.Sprint(rejects) != fmt.Sprint(wantRejects) {
		t.Errorf("rejects by reason %v, want %v", rejects, wantRejects)
	}

	bounds, cum, sum, count := checkHistogram(t, "orbitwatch_batch_seconds", fams["orbitwatch_batch_seconds"])
	if len(bounds) != len(LatencyBuckets)+1 {
		t.Fatalf("batch histogram has %d buckets, want %d", len(bounds), len(LatencyBuckets)+1)
	}
	// Hand count: -1 s counts as 0 and 0.5 ms and 1 ms fall in le=0.001 (3),
	// 3 ms in le=0.005 (cumulative 4), 40 s only in +Inf (5).
	at := func(le float64) float64 {
		for i, b := range bounds {
			if b == le {
				return cum[i]
			}
		}
		t.Fatalf("no bucket le=%v", le)
		return 0
	}
	if at(0.001) != 3 || at(0.0025) != 3 || at(0.005) != 4 || at(30) != 4 || at(math.Inf(1)) != 5 || count != 5 {
		t.Errorf("batch buckets %v / %v, count %v", bounds, cum, count)
	}
	if wantSum := 0.0005 + 0.001 + 0.003 + 40; math.Abs(sum-wantSum) > 1e-9 {
		t.Errorf("batch sum %v, want %v", sum, wantSum)
	}
	_, cum, sum, count = checkHistogram(t, "orbitwatch_cut_seconds", fams["orbitwatch_cut_seconds"])
	if count != 2 || sum != 20.2 || cum[6] != 0 || cum[7] != 1 || cum[len(cum)-2] != 2 { // bounds[7] is 0.25, the last finite 30
		t.Errorf("cut histogram %v sum %v count %v, want 0.2 s in le=0.25 and 20 s in le=30", cum, sum, count)
	}
}

func TestMetricsRejectReasonsBounded(t *testing.T) {
	m := NewMetrics()
	rej := map[string]uint64{}
	for i := range 3 * MaxRejectReasons {
		rej[fmt.Sprintf("message %d: bad bytes \xff", i)] = 1
	}
	m.SyncStatus(shard.Status{Rejected: rej})
	m.SyncStatus(shard.Status{Rejected: rej}) // totals, not increments: a second sync changes nothing
	fams, _ := parseExposition(t, scrape(t, m))
	s := fams["orbitwatch_events_rejected_total"].samples
	if len(s) != MaxRejectReasons {
		t.Fatalf("%d reject series, want at most %d", len(s), MaxRejectReasons)
	}
	var total float64
	var other float64
	for _, x := range s {
		total += x.value
		if x.labels["reason"] == otherReason {
			other = x.value
		}
		if strings.ContainsRune(x.labels["reason"], 0xff) || !strings.Contains(x.labels["reason"], "\uFFFD") && x.labels["reason"] != otherReason {
			t.Errorf("reason %q not made valid UTF-8", x.labels["reason"])
		}
	}
	if total != 3*MaxRejectReasons || other != 3*MaxRejectReasons-(MaxRejectReasons-1) {
		t.Errorf("total %v (want %d), other %v (want %d)", total, 3*MaxRejectReasons, other, 2*MaxRejectReasons+1)
	}
}

func TestMetricsConcurrentUpdates(t *testing.T) {
	m := NewMetrics()
	const workers, per = 4, 2000
	var wg sync.WaitGroup
	for w := range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range per {
				m.Batch(time.Duration(i) * time.Microsecond)
				m.Cut(time.Duration(w) * time.Millisecond)
				if i%100 == 0 {
					m.SyncStatus(shard.Status{Applied: uint64(i), Rejected: map[string]uint64{[]string{"a", "b", "c"}[w%3]: 1}})
				}
			}
		}()
	}
	// Scrapes while writers run must still parse and keep buckets cumulative.
	for range 20 {
		fams, _ := parseExposition(t, scrape(t, m))
		checkHistogram(t, "orbitwatch_batch_seconds", fams["orbitwatch_batch_seconds"])
	}
	wg.Wait()
	fams, _ := parseExposition(t, scrape(t, m))
	if v := fams["orbitwatch_checkpoints_total"].samples[0].value; v != workers*per {
		t.Errorf("checkpoints %v, want %d", v, workers*per)
	}
	if n := len(fams["orbitwatch_events_rejected_total"].samples); n != 3 {
		t.Errorf("%d reject series, want 3", n)
	}
	if _, _, _, c := checkHistogram(t, "orbitwatch_batch_seconds", fams["orbitwatch_batch_seconds"]); c != workers*per {
		t.Errorf("batch count %v, want %d", c, workers*per)
	}
}

func TestMetricsObserverAllocatesNothing(t *testing.T) {
	m := NewMetrics()
	allocs := testing.AllocsPerRun(1000, func() {
		m.Batch(3 * time.Millisecond)
		m.Cut(time.Second)
	})
	if allocs != 0 {
		t.Errorf("metric updates allocate %v times per call", allocs)
	}
}

func TestNewHistogramRejectsBadBounds(t *testing.T) {
	for _, b := range [][]float64{{0.1, 0.1}, {0, 1}, {1, math.Inf(1)}, {2, 1}, {math.NaN()}} {
		func() {
			defer func() {
				r := recover()
				if r == nil || !strings.HasPrefix(fmt.Sprint(r), "api: ") {
					t.Errorf("bounds %v: panic %v, want an api: panic", b, r)
				}
			}()
			NewHistogram(b)
		}()
	}
}

func BenchmarkMetricsPerEvent(b *testing.B) {
	m := NewMetrics()
	b.ReportAllocs()
	for i := 0; b.Loop(); i++ {
		m.Batch(time.Duration(i&1023) * time.Microsecond)
	}
}

// TestMetricsWebhook hands alerts to a real webhook whose receiver fails
// some tries and refuses one alert for good, and to a second one whose
// queue overflows while its receiver stalls: /metrics shows the
// webhook's own counts (delivered, failed, dropped, retries, waiting).
func TestMetricsWebhook(t *testing.T) {
	var mu sync.Mutex
	tries := map[string]int{}
	recv := httptest.NewServer(http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		id := r.Header.Get(alert.AlertIDHeader)
		mu.Lock()
		tries[id]++
		n := tries[id]
		mu.Unlock()
		switch {
		case strings.HasPrefix(id, "refused"):
			http.Error(w, "no", http.StatusForbidden)
		case n == 1:
			http.Error(w, "later", http.StatusServiceUnavailable)
		}
	}))
	defer recv.Close()
	quiet := slog.New(slog.NewTextHandler(io.Discard, nil))
	hook, err := alert.NewWebhook(alert.WebhookConfig{URL: recv.URL, Backoff: time.Millisecond, Logger: quiet})
	if err != nil {
		t.Fatal(err)
	}
	defer hook.Close(context.Background())
	hook.Send(alert.Alert{ID: "a1"}, alert.Alert{ID: "a2"}, alert.Alert{ID: "a3"}, alert.Alert{ID: "refused-1"})
	deadline := time.Now().Add(20 * time.Second)
	for s := hook.Stats(); s.Delivered+s.Failed < 4; s = hook.Stats() {
		if time.Now().After(deadline) {
			t.Fatalf("webhook stats %+v", s)
		}
		time.Sleep(5 * time.Millisecond)
	}

	v, _ := buildView(t, tailedTriangle(), []uint64{5}, nil)
	fams, _ := parseExposition(t, string(func() []byte { _, _, b := get(t, New(v, Options{Webhook: hook}), "/metrics"); return b }()))
	byOutcome := map[string]float64{}
	for _, s := range fams["orbitwatch_webhook_alerts_total"].samples {
		byOutcome[s.labels["outcome"]] = s.value
	}
	// Three delivered at their second try (three retries), one refused
	// for good at its first (no retry): counted by hand from the receiver.
	if byOutcome["delivered"] != 3 || byOutcome["failed"] != 1 || byOutcome["dropped"] != 0 || fams["orbitwatch_webhook_retries_total"].samples[0].value != 3 {
		t.Errorf("webhook metrics %v, retries %v; want 3 delivered, 1 failed, 3 retries", byOutcome, fams["orbitwatch_webhook_retries_total"].samples[0].value)
	}

	// A queue of 2 behind a receiver that stalls: of 5 alerts one is in
	// flight, 2 wait and 2 are pushed out.
	gate := make(chan struct{})
	entered := make(chan struct{}, 1)
	stall := httptest.NewServer(http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		select {
		case entered <- struct{}{}:
		default:
		}
		<-gate
	}))
	defer stall.Close()
	slow, err := alert.NewWebhook(alert.WebhookConfig{URL: stall.URL, Queue: 2, Logger: quiet})
	if err != nil {
		t.Fatal(err)
	}
	slow.Send(alert.Alert{ID: "b1"})
	<-entered
	slow.Send(alert.Alert{ID: "b2"}, alert.Alert{ID: "b3"}, alert.Alert{ID: "b4"}, alert.Alert{ID: "b5"})
	fams, _ = parseExposition(t, string(func() []byte { _, _, b := get(t, New(v, Options{Webhook: slow}), "/metrics"); return b }()))
	for _, s := range fams["orbitwatch_webhook_alerts_total"].samples {
		byOutcome[s.labels["outcome"]] = s.value
	}
	if byOutcome["dropped"] != 2 || fams["orbitwatch_webhook_queue_alerts"].samples[0].value != 2 {
		t.Errorf("stalled webhook: %v, waiting %v; want 2 dropped, 2 waiting", byOutcome, fams["orbitwatch_webhook_queue_alerts"].samples[0].value)
	}
	close(gate)
	slow.Close(context.Background())
}
