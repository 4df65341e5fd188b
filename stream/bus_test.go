package stream

import (
	"context"
	"errors"
	"fmt"
	"strings"
	"testing"
	"time"

	"github.com/nats-io/nats.go"
	"github.com/nats-io/nats.go/jetstream"
)

// startBus starts an embedded server storing in dir on a random loopback
// port and connects a JetStream client; both stop at the end of the test.
func startBus(t *testing.T, dir string) (*Embedded, jetstream.JetStream) {
	t.Helper()
	srv, err := StartEmbedded(EmbeddedOptions{StoreDir: dir})
	if err != nil {
		t.Fatal(err)
	}
	nc, err := nats.Connect(srv.URL())
	if err != nil {
		srv.Shutdown()
		t.Fatal(err)
	}
	t.Cleanup(func() {
		nc.Close()
		srv.Shutdown()
	})
	js, err := jetstream.New(nc)
	if err != nil {
		t.Fatal(err)
	}
	return srv, js
}

func testContext(t *testing.T) context.Context {
	ctx, cancel := context.WithTimeout(context.Background(), 60*time.Second)
	t.Cleanup(cancel)
	return ctx
}

// payments is a fictional log of n events between 500 accounts, with
// every tenth event a remove, ids as the file source would give them.
func payments(n int) []Event {
	evs := make([]Event, n)
	for i := range evs {
		evs[i] = Event{
			ID:  fmt.Sprintf("pay-%06d", i),
			Src: fmt.Sprintf("acct-%03d", i*37%500),
			Dst: fmt.Sprintf("acct-%03d", (i*37+1+i%11)%500),
		}
		if i%7 != 0 {
			evs[i].TS, evs[i].HasTS = time.Unix(1772357400+int64(i), int64(i%1000)*1000).UTC(), true
		}
		if i%10 == 9 {
			evs[i].Op = OpRemove
		}
	}
	return evs
}

func publishAll(t *testing.T, ctx context.Context, p *Publisher, evs []Event) {
	t.Helper()
	for _, e := range evs {
		if err := p.Publish(ctx, e); err != nil {
			t.Fatal(err)
		}
	}
	if err := p.Flush(ctx); err != nil {
		t.Fatal(err)
	}
}

// consumeN reads n messages from c and fails unless they are want, in
// order, at stream sequences firstSeq, firstSeq+1, …
func consumeN(t *testing.T, ctx context.Context, c *Consumer, firstSeq uint64, want []Event) {
	t.Helper()
	for i, w := range want {
		seq, ev, err := c.Next(ctx)
		if err != nil {
			t.Fatalf("message %d: %v", i, err)
		}
		w.Line = int(firstSeq) + i
		if seq != firstSeq+uint64(i) || !sameEvent(ev, w) {
			t.Fatalf("message %d: seq %d %+v, want seq %d %+v", i, seq, ev, firstSeq+uint64(i), w)
		}
	}
}

func streamMsgs(t *testing.T, ctx context.Context, js jetstream.JetStream, name string) uint64 {
	t.Helper()
	s, err := js.Stream(ctx, name)
	if err != nil {
		t.Fatal(err)
	}
	info, err := s.Info(ctx)
	if err != nil {
		t.Fatal(err)
	}
	return info.State.Msgs
}

func TestStartEmbeddedOptions(t *testing.T) {
	if _, err := StartEmbedded(EmbeddedOptions{}); err == nil {
		t.Error("no StoreDir accepted")
	}
	if _, err := StartEmbedded(EmbeddedOptions{StoreDir: t.TempDir(), Listen: "127.0.0.1"}); err == nil {
		t.Error("listen without a port accepted")
	}
	srv, js := startBus(t, t.TempDir())
	if !strings.HasPrefix(srv.URL(), "nats://127.0.0.1:") || strings.HasSuffix(srv.URL(), ":4222") {
		t.Errorf("URL %s, want a random loopback port", srv.URL())
	}
	info, err := js.AccountInfo(testContext(t))
	if err != nil || info.Streams != 0 {
		t.Errorf("account info on a new server: %+v, %v", info, err)
	}
}

func TestPublishConsumeInOrder(t *testing.T) {
	ctx := testContext(t)
	_, js := startBus(t, t.TempDir())
	if _, err := EnsureStream(ctx, js, "EDGES", "edges.in", 1); err != nil {
		t.Fatal(err)
	}
	evs := payments(10_000)
	p := NewPublisher(js, "edges.in", PublisherOptions{Stream: "EDGES", MaxPending: 1000})
	publishAll(t, ctx, p, evs)
	if st := p.Stats(); st.Stored != len(evs) || st.Duplicates != 0 || st.LastSeq != uint64(len(evs)) {
		t.Fatalf("first publish: %+v", st)
	}
	c, err := NewConsumer(ctx, js, "EDGES", 0)
	if err != nil {
		t.Fatal(err)
	}
	consumeN(t, ctx, c, 1, evs)
	if c.Pending() != 0 {
		t.Errorf("Pending %d after the last message", c.Pending())
	}
	c.Close()

	// The same events again: the server drops every one by its id.
	p2 := NewPublisher(js, "edges.in", PublisherOptions{})
	publishAll(t, ctx, p2, evs)
	if st := p2.Stats(); st.Stored != 0 || st.Duplicates != len(evs) {
		t.Errorf("second publish: %+v, want all duplicates", st)
	}
	if n := streamMsgs(t, ctx, js, "EDGES"); n != uint64(len(evs)) {
		t.Errorf("stream holds %d messages, want %d", n, len(evs))
	}
}

func TestConsumerResumes(t *testing.T) {
	ctx := testContext(t)
	_, js := startBus(t, t.TempDir())
	if _, err := EnsureStream(ctx, js, "EDGES", "edges.in", 1); err != nil {
		t.Fatal(err)
	}
	evs := payments(3000)
	publishAll(t, ctx, NewPublisher(js, "edges.in", PublisherOptions{JSON: true}), evs)
	const n = 1234
	c, err := NewConsumer(ctx, js, "EDGES", 1)
	if err != nil {
		t.Fatal(err)
	}
	consumeN(t, ctx, c, 1, evs[:n])
	if c.Pending() != uint64(len(evs)-n) {
		t.Errorf("Pending %d after %d of %d", c.Pending(), n, len(evs))
	}
	c.Close()
	c, err = NewConsumer(ctx, js, "EDGES", n+1)
	if err != nil {
		t.Fatal(err)
	}
	defer c.Close()
	consumeN(t, ctx, c, n+1, evs[n:])
}

func TestMalformedMessage(t *testing.T) {
	ctx := testContext(t)
	_, js := startBus(t, t.TempDir())
	if _, err := EnsureStream(ctx, js, "EDGES", "edges.in", 1); err != nil {
		t.Fatal(err)
	}
	evs := payments(3)
	p := NewPublisher(js, "edges.in", PublisherOptions{})
	publishAll(t, ctx, p, evs[:1])
	if _, err := js.Publish(ctx, "edges.in", []byte{0x01, 0x09, 0xff}); err != nil {
		t.Fatal(err)
	}
	if _, err := js.Publish(ctx, "edges.in", []byte(`{"src":"acct-1","dst":"acct-2"}`)); err != nil {
		t.Fatal(err)
	}
	publishAll(t, ctx, p, evs[1:])
	c, err := NewConsumer(ctx, js, "EDGES", 0)
	if err != nil {
		t.Fatal(err)
	}
	defer c.Close()
	consumeN(t, ctx, c, 1, evs[:1])
	seq, _, err := c.Next(ctx)
	var me *MessageError
	if !errors.As(err, &me) || me.Seq != 2 || seq != 2 || !strings.Contains(me.Error(), "unknown flags") {
		t.Fatalf("malformed message: seq %d, %v; want a MessageError at seq 2", seq, err)
	}
	// A JSON message without id nor Nats-Msg-Id keeps an empty id.
	consumeN(t, ctx, c, 3, []Event{{Src: "acct-1", Dst: "acct-2"}})
	consumeN(t, ctx, c, 4, evs[1:])
}

// TestConsumerWaitsWhenCaughtUp: Next on a caught-up stream ends with the
// context, not with a MessageError, and the consumer still delivers what
// is published later.
func TestConsumerWaitsWhenCaughtUp(t *testing.T) {
	ctx := testContext(t)
	_, js := startBus(t, t.TempDir())
	if _, err := EnsureStream(ctx, js, "EDGES", "edges.in", 1); err != nil {
		t.Fatal(err)
	}
	c, err := NewConsumer(ctx, js, "EDGES", 0)
	if err != nil {
		t.Fatal(err)
	}
	defer c.Close()
	short, cancel := context.WithTimeout(ctx, 300*time.Millisecond)
	_, _, err = c.Next(short)
	cancel()
	var me *MessageError
	if err == nil || errors.As(err, &me) {
		t.Fatalf("Next on an empty stream: %v, want the context's end", err)
	}
	evs := payments(5)
	publishAll(t, ctx, NewPublisher(js, "edges.in", PublisherOptions{}), evs)
	consumeN(t, ctx, c, 1, evs)
}

func TestEnsureStreamIdempotent(t *testing.T) {
	ctx := testContext(t)
	_, js := startBus(t, t.TempDir())
	for i := 0; i < 2; i++ {
		if _, err := EnsureStream(ctx, js, "EDGES", "edges.in", 1); err != nil {
			t.Fatalf("call %d: %v", i+1, err)
		}
	}
	if _, err := EnsureStream(ctx, js, "EDGES", "edges.other", 1); err == nil || !strings.Contains(err.Error(), "exists with subjects [edges.in]") {
		t.Errorf("a stream with another subject: %v", err)
	}
	// One server refuses 3 replicas before it looks at the name.
	if _, err := EnsureStream(ctx, js, "EDGES", "edges.in", 3); err == nil {
		t.Error("3 replicas accepted on one server")
	}
	if n := streamMsgs(t, ctx, js, "EDGES"); n != 0 {
		t.Errorf("EnsureStream wrote %d messages", n)
	}
}

func TestPublishRejectedByServer(t *testing.T) {
	ctx := testContext(t)
	_, js := startBus(t, t.TempDir())
	if _, err := EnsureStream(ctx, js, "EDGES", "edges.in", 1); err != nil {
		t.Fatal(err)
	}
	p := NewPublisher(js, "edges.in", PublisherOptions{Stream: "ELSEWHERE"})
	if err := p.Publish(ctx, payments(1)[0]); err != nil {
		t.Fatal(err)
	}
	err := p.Flush(ctx)
	if err == nil || !strings.Contains(err.Error(), "pay-000000") {
		t.Errorf("publish to the wrong stream: %v, want a reject naming the event", err)
	}
	// With room for one outstanding ack, the second Publish waits for the
	// first and returns its reject.
	p1 := NewPublisher(js, "edges.in", PublisherOptions{Stream: "ELSEWHERE", MaxPending: 1})
	if err := p1.Publish(ctx, payments(2)[1]); err == nil || !strings.Contains(err.Error(), "pay-000001") {
		t.Errorf("Publish with MaxPending 1 to the wrong stream: %v, want the reject of pay-000001", err)
	}
	if err := p1.Flush(ctx); err != nil {
		t.Errorf("Flush with nothing outstanding: %v", err)
	}
	if err := p.Publish(ctx, Event{Src: "a", Dst: "b", Line: 4}); err == nil {
		t.Error("an event without id was published")
	}
	if err := NewPublisher(js, "edges.in", PublisherOptions{JSON: true}).Publish(ctx, Event{ID: "x", Src: "\xff", Dst: "b"}); err == nil {
		t.Error("a non-UTF-8 node id was published as JSON")
	}
}

func TestRestartKeepsStream(t *testing.T) {
	ctx := testContext(t)
	dir := t.TempDir()
	evs := payments(500)
	srv, err := StartEmbedded(EmbeddedOptions{StoreDir: dir})
	if err != nil {
		t.Fatal(err)
	}
	nc, err := nats.Connect(srv.URL())
	if err != nil {
		t.Fatal(err)
	}
	js, _ := jetstream.New(nc)
	if _, err := EnsureStream(ctx, js, "EDGES", "edges.in", 1); err != nil {
		t.Fatal(err)
	}
	publishAll(t, ctx, NewPublisher(js, "edges.in", PublisherOptions{}), evs[:300])
	nc.Close()
	srv.Shutdown()

	_, js = startBus(t, dir)
	if _, err := EnsureStream(ctx, js, "EDGES", "edges.in", 1); err != nil {
		t.Fatal(err)
	}
	if n := streamMsgs(t, ctx, js, "EDGES"); n != 300 {
		t.Fatalf("after restart the stream holds %d messages, want 300", n)
	}
	// The duplicate window outlives the restart: the first 300 are dropped.
	p := NewPublisher(js, "edges.in", PublisherOptions{})
	publishAll(t, ctx, p, evs)
	if st := p.Stats(); st.Stored != 200 || st.Duplicates != 300 {
		t.Errorf("publish after restart: %+v, want 200 stored, 300 duplicates", st)
	}
	c, err := NewConsumer(ctx, js, "EDGES", 0)
	if err != nil {
		t.Fatal(err)
	}
	defer c.Close()
	consumeN(t, ctx, c, 1, evs)
}

// BenchmarkPublishConsume publishes b.N events (binary form) to an
// embedded server and reads them back, and reports the rate of each.
// benchBus starts an embedded server with the named streams (subject
// lower-case name + ".in") for a benchmark.
func benchBus(b *testing.B, names ...string) jetstream.JetStream {
	srv, err := StartEmbedded(EmbeddedOptions{StoreDir: b.TempDir()})
	if err != nil {
		b.Fatal(err)
	}
	b.Cleanup(srv.Shutdown)
	nc, err := nats.Connect(srv.URL())
	if err != nil {
		b.Fatal(err)
	}
	b.Cleanup(nc.Close)
	js, _ := jetstream.New(nc)
	for _, name := range names {
		if _, err := EnsureStream(context.Background(), js, name, strings.ToLower(name)+".in", 1); err != nil {
			b.Fatal(err)
		}
	}
	return js
}

func BenchmarkPublishConsume(b *testing.B) {
	js := benchBus(b, "BENCH")
	ctx := context.Background()
	evs := payments(b.N)
	b.ResetTimer()
	p := NewPublisher(js, "bench.in", PublisherOptions{})
	for _, e := range evs {
		if err := p.Publish(ctx, e); err != nil {
			b.Fatal(err)
		}
	}
	if err := p.Flush(ctx); err != nil {
		b.Fatal(err)
	}
	published := b.Elapsed()
	c, err := NewConsumer(ctx, js, "BENCH", 0)
	if err != nil {
		b.Fatal(err)
	}
	defer c.Close()
	for range evs {
		if _, _, err := c.Next(ctx); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(b.N)/published.Seconds(), "published/s")
	b.ReportMetric(float64(b.N)/(b.Elapsed()-published).Seconds(), "consumed/s")
}
