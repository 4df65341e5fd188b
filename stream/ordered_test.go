package stream

import (
	"context"
	"errors"
	"fmt"
	"strings"
	"testing"
	"time"

	"github.com/nats-io/nats.go/jetstream"
)

// storedIDs returns the event ids of the stream's messages in stream
// order, read with a Consumer.
func storedIDs(t *testing.T, ctx context.Context, js jetstream.JetStream, name string) []string {
	t.Helper()
	s, err := js.Stream(ctx, name)
	if err != nil {
		t.Fatal(err)
	}
	info, err := s.Info(ctx)
	if err != nil {
		t.Fatal(err)
	}
	var ids []string
	if info.State.Msgs == 0 {
		return nil
	}
	c, err := NewConsumer(ctx, js, name, info.State.FirstSeq)
	if err != nil {
		t.Fatal(err)
	}
	defer c.Close()
	for seq := info.State.FirstSeq; seq <= info.State.LastSeq; seq++ {
		got, ev, err := c.Next(ctx)
		if err != nil || got != seq {
			t.Fatalf("message %d: got %d, %v", seq, got, err)
		}
		ids = append(ids, ev.ID)
	}
	return ids
}

func idsOf(evs []Event) []string {
	out := make([]string, len(evs))
	for i, e := range evs {
		out[i] = e.ID
	}
	return out
}

// firstOnce keeps the first event of each id, in order: what a stream
// that stores every id once and in order holds.
func firstOnce(evs []Event) []string {
	seen := map[string]bool{}
	var out []string
	for _, e := range evs {
		if !seen[e.ID] {
			seen[e.ID] = true
			out = append(out, e.ID)
		}
	}
	return out
}

func sameIDs(t *testing.T, what string, got, want []string) {
	t.Helper()
	if strings.Join(got, ",") != strings.Join(want, ",") {
		n := 0
		for n < len(got) && n < len(want) && got[n] == want[n] {
			n++
		}
		t.Fatalf("%s: %d ids stored, want %d; first difference at %d", what, len(got), len(want), n)
	}
}

func publishOrdered(t *testing.T, ctx context.Context, js jetstream.JetStream, name, subject string, evs []Event, maxPending int) PublishStats {
	t.Helper()
	s, err := js.Stream(ctx, name)
	if err != nil {
		t.Fatal(err)
	}
	p := NewOrderedPublisher(js, name, subject, s.CachedInfo().State.LastSeq, OrderedOptions{MaxPending: maxPending})
	for _, e := range evs {
		if err := p.Publish(ctx, e); err != nil {
			t.Fatal(err)
		}
	}
	if err := p.Flush(ctx); err != nil {
		t.Fatal(err)
	}
	if a := p.Acked(); len(evs) > 0 && a.ID != evs[len(evs)-1].ID {
		t.Fatalf("ack point %+v after all, want the last event", a)
	}
	return p.Stats()
}

// TestOrderedPublisherDuplicates publishes logs that mix events already
// stored with new ones, in runs and one by one, so that the pipelined
// predictions fail again and again: the stream ends with every id once,
// in the order of first appearance, and the counts add up.
func TestOrderedPublisherDuplicates(t *testing.T) {
	ctx := testContext(t)
	_, js := startBus(t, t.TempDir())
	if _, err := EnsureStream(ctx, js, "EDGES", "edges.in", 1); err != nil {
		t.Fatal(err)
	}
	evs := payments(3000)
	var all []Event
	step := func(what string, batch []Event, maxPending, wantStored, wantDups int) {
		t.Helper()
		all = append(all, batch...)
		start := time.Now()
		st := publishOrdered(t, ctx, js, "EDGES", "edges.in", batch, maxPending)
		t.Logf("%s: %v", what, time.Since(start))
		if st.Stored != wantStored || st.Duplicates != wantDups {
			t.Fatalf("%s: %d stored, %d duplicates; want %d, %d", what, st.Stored, st.Duplicates, wantStored, wantDups)
		}
		sameIDs(t, what, storedIDs(t, ctx, js, "EDGES"), firstOnce(all))
	}
	step("new", evs[:1000], 64, 1000, 0)
	step("old then new", evs[500:1500], 64, 500, 500)
	// Alternating: every other event is one already stored.
	var mixed []Event
	for i := 1500; i < 1800; i++ {
		mixed = append(mixed, evs[i], evs[i-1500])
	}
	step("alternating", mixed, 16, 300, 300)
	// A log that repeats its own ids (an id column with repeats).
	var repeats []Event
	for i := 1800; i < 2000; i++ {
		repeats = append(repeats, evs[i], evs[i])
	}
	step("repeats within", repeats, 8, 200, 200)
	step("one in flight", evs[1990:2100], 1, 100, 10)
}

// TestOrderedPublisherAnotherWriter: messages stored by another writer
// (a worker's control message, another log) between two events, before
// the first and while events are in flight, fall between the log's
// events; the log's events are stored in order, each once, without a
// stop.
func TestOrderedPublisherAnotherWriter(t *testing.T) {
	ctx := testContext(t)
	_, js := startBus(t, t.TempDir())
	if _, err := EnsureStream(ctx, js, "EDGES", "edges.in", 1); err != nil {
		t.Fatal(err)
	}
	other := func(id string) {
		e := payments(30)[25]
		e.ID = id
		if _, err := js.Publish(ctx, "edges.in", EncodeBinary(nil, e), jetstream.WithMsgID(id)); err != nil {
			t.Fatal(err)
		}
	}
	evs := payments(5000)
	for i := range evs {
		evs[i].FileLine = i + 2
	}
	p := NewOrderedPublisher(js, "EDGES", "edges.in", 0, OrderedOptions{MaxPending: 64})
	other("before")
	want := []string{"before"}
	for i, e := range evs {
		if err := p.Publish(ctx, e); err != nil {
			t.Fatal(err)
		}
		if i == 10 {
			if err := p.Flush(ctx); err != nil {
				t.Fatal(err)
			}
			want = append(want, idsOf(evs[:11])...)
			other("between")
			want = append(want, "between")
		}
		if i%1000 == 999 {
			// While up to 64 events are in flight.
			other(fmt.Sprintf("in flight %d", i))
		}
	}
	if err := p.Flush(ctx); err != nil {
		t.Fatal(err)
	}
	if a := p.Acked(); a.ID != evs[len(evs)-1].ID {
		t.Errorf("ack point %+v, want the last event", a)
	}
	got := storedIDs(t, ctx, js, "EDGES")
	var ours []string
	for _, id := range got {
		if strings.HasPrefix(id, "pay-") {
			ours = append(ours, id)
		}
	}
	sameIDs(t, "the log's events among the others'", ours, idsOf(evs))
	if len(got) != len(evs)+7 || got[0] != "before" || got[12] != "between" {
		t.Fatalf("%d messages, first %q, 13th %q", len(got), got[0], got[12])
	}
	if st := p.Stats(); st.Stored != len(evs) || st.Interleaved < 2 {
		t.Errorf("stats %+v, want %d stored and at least 2 interleavings", st, len(evs))
	}
}

// TestOrderedPublisherServerStops shuts the server down while events are
// in flight: the publisher stops naming the first event not acknowledged,
// the stream holds a prefix of the log in order, and after a restart an
// ordered publish of the rest from the ack point completes the log with
// nothing twice and nothing out of order.
func TestOrderedPublisherServerStops(t *testing.T) {
	ctx := testContext(t)
	dir := t.TempDir()
	srv, js := startBus(t, dir)
	if _, err := EnsureStream(ctx, js, "EDGES", "edges.in", 1); err != nil {
		t.Fatal(err)
	}
	evs := payments(60000)
	t0 := time.Now()
	p := NewOrderedPublisher(js, "EDGES", "edges.in", 0, OrderedOptions{AckTimeout: 5 * time.Second})
	var err error
	for i, e := range evs {
		if i == 20000 {
			go srv.Shutdown()
		}
		if err = p.Publish(ctx, e); err != nil {
			break
		}
	}
	t.Logf("publish returned after %v", time.Since(t0))
	err = errors.Join(err, p.Flush(ctx))
	t.Logf("flush returned after %v: %v", time.Since(t0), err)
	var stop *PublishStopError
	if !errors.As(err, &stop) {
		t.Fatalf("publish across a shutdown: %v, want a stop", err)
	}
	a := p.Acked()
	if a.ID == "" || stop.ID != evs[a.Line].ID && a.Line != 0 {
		t.Logf("ack point %+v, stop at %s", a, stop.ID)
	}
	srv2, js2 := startBus(t, dir)
	_ = srv2
	stored := storedIDs(t, ctx, js2, "EDGES")
	if len(stored) < 1000 {
		t.Fatalf("only %d events stored before the shutdown", len(stored))
	}
	sameIDs(t, "prefix before the shutdown", stored, idsOf(evs[:len(stored)]))
	// The ack point is at or before what the stream holds.
	k := 0
	for k < len(evs) && evs[k].ID != a.ID {
		k++
	}
	if k+1 > len(stored) {
		t.Fatalf("ack point at event %d, the stream holds %d", k+1, len(stored))
	}
	// Resume from what the stream holds, as LogPublisher does.
	publishOrdered(t, ctx, js2, "EDGES", "edges.in", evs[len(stored):], 256)
	sameIDs(t, "after the resume", storedIDs(t, ctx, js2, "EDGES"), idsOf(evs))
}

// logText is a CSV log of n events with derived ids.
func logText(from, n int) string {
	var b strings.Builder
	b.WriteString("ts,src,dst\n")
	for i := from; i < from+n; i++ {
		fmt.Fprintf(&b, "%d,acct-%03d,acct-%03d\n", 1772357400+i, i*37%500, (i*37+1+i%11)%500)
	}
	return b.String()
}

// publishLog publishes text through a LogPublisher as the publish command
// does and returns its counts.
func publishLog(t *testing.T, ctx context.Context, js jetstream.JetStream, man *Manifest, name, text string) (PublishStats, error) {
	t.Helper()
	lp, err := NewLogPublisher(ctx, js, "EDGES", "edges.in", man, OrderedOptions{MaxPending: 128})
	if err != nil {
		t.Fatal(err)
	}
	lp.Begin(name)
	r, err := NewReader(name, strings.NewReader(text), Options{})
	if err != nil {
		t.Fatal(err)
	}
	for {
		ev, err := r.Next()
		if err != nil {
			break
		}
		if err := lp.Event(ctx, ev); err != nil {
			return lp.Stats(), errors.Join(err, lp.End(ctx))
		}
	}
	err = lp.End(ctx)
	return lp.Stats(), err
}

func readIDs(t *testing.T, text string) []string {
	r, err := NewReader("x", strings.NewReader(text), Options{})
	if err != nil {
		t.Fatal(err)
	}
	return idsOf(readAll(t, r))
}

// TestManifestBeyondTheDuplicateWindow: with a duplicate window of half a
// second, a log published again after it stores nothing; a log grown by
// appending stores only its new part; an entry that lags behind what a
// stopped publish stored is caught up from the stream; a different log
// with the same first event is refused; a log among another writer's
// messages is found past them; without the manifest the same republish
// stores the log twice (what the manifest prevents).
func TestManifestBeyondTheDuplicateWindow(t *testing.T) {
	ctx := testContext(t)
	_, js := startBus(t, t.TempDir())
	if _, err := js.CreateStream(ctx, jetstream.StreamConfig{Name: "EDGES", Subjects: []string{"edges.in"}, Duplicates: 500 * time.Millisecond}); err != nil {
		t.Fatal(err)
	}
	man, err := OpenManifest(ctx, js, "published", 1)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := OpenManifest(ctx, js, "published", 1); err != nil {
		t.Fatalf("opening the manifest again: %v", err)
	}
	window := func() { time.Sleep(700 * time.Millisecond) }
	log := logText(0, 3000)
	want := readIDs(t, log)
	if st, err := publishLog(t, ctx, js, man, "a.csv", log); err != nil || st.Stored != 3000 {
		t.Fatalf("first publish: %+v, %v", st, err)
	}
	window()
	if st, err := publishLog(t, ctx, js, man, "copy.csv", log); err != nil || st.Stored != 0 || st.Duplicates != 3000 {
		t.Fatalf("republish after the window: %+v, %v; want 0 stored, 3000 known", st, err)
	}
	sameIDs(t, "republished", storedIDs(t, ctx, js, "EDGES"), want)

	grown := log + strings.TrimPrefix(logText(3000, 500), "ts,src,dst\n")
	want = readIDs(t, grown)
	window()
	if st, err := publishLog(t, ctx, js, man, "grown.csv", grown); err != nil || st.Stored != 500 || st.Duplicates != 3000 {
		t.Fatalf("grown log: %+v, %v; want 500 stored", st, err)
	}
	sameIDs(t, "grown", storedIDs(t, ctx, js, "EDGES"), want)

	// Set the entry back, as if the publish had stopped before recording
	// its last 2000 events: they are found in the stream, not sent.
	first := want[0]
	e, ok, err := man.Get(ctx, "EDGES", first)
	if err != nil || !ok || e.Line != 3500 {
		t.Fatalf("entry %+v, %v, %v", e, ok, err)
	}
	e.Line, e.LastID, e.Seq = 1500, want[1499], 1500
	if err := man.Put(ctx, e); err != nil {
		t.Fatal(err)
	}
	window()
	if st, err := publishLog(t, ctx, js, man, "grown.csv", grown); err != nil || st.Stored != 0 || st.Duplicates != 3500 {
		t.Fatalf("lagging entry: %+v, %v; want nothing stored", st, err)
	}
	sameIDs(t, "lagging entry", storedIDs(t, ctx, js, "EDGES"), want)

	changed := strings.Replace(grown, "\n1772357410,", "\n1772357410,x", 1)
	if _, err := publishLog(t, ctx, js, man, "changed.csv", changed); err == nil || !strings.Contains(err.Error(), "differs by line") {
		t.Fatalf("a changed log: %v, want it refused", err)
	}
	sameIDs(t, "changed log refused", storedIDs(t, ctx, js, "EDGES"), want)

	// A log published while another writer stores messages among its
	// events, its entry then set back to before its first event: the
	// republish reads past the other messages and stores nothing.
	third := logText(10000, 2000)
	stop := make(chan struct{})
	done := make(chan int)
	go func() {
		n := 0
		for {
			select {
			case <-stop:
				done <- n
				return
			case <-time.After(time.Millisecond):
			}
			e := Event{ID: fmt.Sprintf("control-%d", n), Src: "x", Dst: "y"}
			if _, err := js.Publish(ctx, "edges.in", EncodeBinary(nil, e), jetstream.WithMsgID(e.ID)); err == nil {
				n++
			}
		}
	}()
	st, err := publishLog(t, ctx, js, man, "third.csv", third)
	close(stop)
	others := <-done
	if err != nil || st.Stored != 2000 || others == 0 || st.Interleaved == 0 {
		t.Fatalf("log with another writer: %+v, %v (%d other messages)", st, err, others)
	}
	thirdIDs := readIDs(t, third)
	e, _, _ = man.Get(ctx, "EDGES", thirdIDs[0])
	e.Line, e.LastID, e.Seq = 0, "", uint64(len(want))
	if err := man.Put(ctx, e); err != nil {
		t.Fatal(err)
	}
	window()
	if st, err := publishLog(t, ctx, js, man, "third.csv", third); err != nil || st.Stored != 0 || st.Duplicates != 2000 {
		t.Fatalf("republish past other writers' messages: %+v, %v; want nothing stored", st, err)
	}
	var ours []string
	for _, id := range storedIDs(t, ctx, js, "EDGES") {
		if !strings.HasPrefix(id, "control-") {
			ours = append(ours, id)
		}
	}
	sameIDs(t, "logs among other writers' messages", ours, append(append([]string(nil), want...), thirdIDs...))

	window()
	if st, err := publishLog(t, ctx, js, nil, "again.csv", log); err != nil || st.Stored != 3000 {
		t.Fatalf("without a manifest after the window: %+v, %v; want the log stored again", st, err)
	}
}

// BenchmarkOrderedVsUnordered publishes b.N events to an embedded server
// with the unordered Publisher and then, to a second stream, with the
// OrderedPublisher, in one run, and reports both rates and their ratio.
func BenchmarkOrderedVsUnordered(b *testing.B) {
	js := benchBus(b, "PLAIN", "ORDERED")
	ctx := context.Background()
	evs := payments(b.N)
	b.ResetTimer()
	start := time.Now()
	p := NewPublisher(js, "plain.in", PublisherOptions{})
	for _, e := range evs {
		if err := p.Publish(ctx, e); err != nil {
			b.Fatal(err)
		}
	}
	if err := p.Flush(ctx); err != nil {
		b.Fatal(err)
	}
	plain := time.Since(start)
	start = time.Now()
	op := NewOrderedPublisher(js, "ORDERED", "ordered.in", 0, OrderedOptions{})
	for _, e := range evs {
		if err := op.Publish(ctx, e); err != nil {
			b.Fatal(err)
		}
	}
	if err := op.Flush(ctx); err != nil {
		b.Fatal(err)
	}
	ordered := time.Since(start)
	b.ReportMetric(float64(b.N)/plain.Seconds(), "unordered/s")
	b.ReportMetric(float64(b.N)/ordered.Seconds(), "ordered/s")
	b.ReportMetric(ordered.Seconds()/plain.Seconds(), "ordered/unordered-time")
}
