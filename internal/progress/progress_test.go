package progress

import (
	"strings"
	"sync"
	"sync/atomic"
	"testing"
	"time"
)

// fakeClock is a clock the test moves by hand.
type fakeClock struct{ t atomic.Int64 }

func (c *fakeClock) now() time.Time          { return time.Unix(0, c.t.Load()) }
func (c *fakeClock) advance(d time.Duration) { c.t.Add(int64(d)) }

// lines is a writer that hands every Write to the test.
type lines chan string

func (l lines) Write(p []byte) (int, error) { l <- string(p); return len(p), nil }

func (l lines) next(t *testing.T) string {
	t.Helper()
	select {
	case s := <-l:
		return s
	case <-time.After(5 * time.Second):
		t.Fatal("no line rendered")
		return ""
	}
}

func start(total int64, terminal bool) (*Reporter, *fakeClock, chan time.Time, lines) {
	c := &fakeClock{}
	c.t.Store(time.Date(2026, 1, 1, 0, 0, 0, 0, time.UTC).UnixNano())
	ticks := make(chan time.Time)
	out := make(lines, 16)
	r := New(out, total, "backfill", WithClock(c.now), WithTicks(ticks), WithTerminal(terminal, 100))
	return r, c, ticks, out
}

func TestPlainLines(t *testing.T) {
	r, c, ticks, out := start(4<<20, false)
	r.Add(50000, 1<<20)
	c.advance(2 * time.Second)
	ticks <- c.now()
	// 50000 events in 2 s; 1 MiB of 4 MiB in 2 s leaves 3 MiB: 6 s.
	if got, want := out.next(t), "backfill:  25.0% of 4.0 MiB, 50000 events, 25.0k events/s, ETA 6s\n"; got != want {
		t.Fatalf("line\n%q, want\n%q", got, want)
	}
	r.Add(150000, 3<<20)
	c.advance(2 * time.Second)
	ticks <- c.now()
	if got, want := out.next(t), "backfill: 100.0% of 4.0 MiB, 200000 events, 50.0k events/s, ETA 0s\n"; got != want {
		t.Fatalf("line\n%q, want\n%q", got, want)
	}
	r.Done()
	if got, want := out.next(t), "backfill: done, 200000 events, 4.0 MiB in 4s (50.0k events/s)\n"; got != want {
		t.Fatalf("closing line\n%q, want\n%q", got, want)
	}
	r.Done()
	select {
	case s := <-out:
		t.Fatalf("second Done wrote %q", s)
	default:
	}
}

func TestTerminalLine(t *testing.T) {
	r, c, ticks, out := start(1000, true)
	r.Add(10, 500)
	c.advance(time.Second)
	ticks <- c.now()
	got := out.next(t)
	if want := "\rbackfill [##########..........]  50.0% of 1000 B, 10 events, 10 events/s, ETA 1s\x1b[K"; got != want {
		t.Fatalf("line\n%q, want\n%q", got, want)
	}
	r.Done()
	if got := out.next(t); !strings.HasPrefix(got, "\rbackfill: done, 10 events, 500 B in 1s") || !strings.HasSuffix(got, "\x1b[K\n") {
		t.Fatalf("closing line %q", got)
	}
}

func TestUnknownTotal(t *testing.T) {
	r, c, ticks, out := start(0, true)
	r.Add(3, 2048)
	c.advance(time.Second)
	ticks <- c.now()
	if got, want := out.next(t), "\rbackfill: 2.0 KiB, 3 events, 3 events/s\x1b[K"; got != want {
		t.Fatalf("line\n%q, want\n%q", got, want)
	}
	r.Done()
	out.next(t)
}

func TestConcurrentAdd(t *testing.T) {
	r, c, ticks, out := start(0, false)
	var wg sync.WaitGroup
	for g := 0; g < 8; g++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := 0; i < 10000; i++ {
				r.Add(1, 3)
			}
		}()
	}
	go func() {
		for i := 0; i < 5; i++ {
			ticks <- c.now()
		}
	}()
	for i := 0; i < 5; i++ {
		out.next(t)
	}
	wg.Wait()
	c.advance(time.Second)
	r.Done()
	if got := out.next(t); !strings.HasPrefix(got, "backfill: done, 80000 events, 234.4 KiB in 1s") {
		t.Fatalf("closing line %q", got)
	}
}

func TestAddAllocatesNothing(t *testing.T) {
	r, _, _, out := start(10, false)
	if a := testing.AllocsPerRun(1000, func() { r.Add(1, 1) }); a != 0 {
		t.Fatalf("Add allocates %.1f times", a)
	}
	r.Done()
	out.next(t)
}

func TestBytes(t *testing.T) {
	for _, c := range []struct {
		n    int64
		want string
	}{{0, "0 B"}, {1023, "1023 B"}, {1024, "1.0 KiB"}, {1536, "1.5 KiB"}, {5 << 30, "5.0 GiB"}, {3 << 40, "3.0 TiB"}} {
		if got := Bytes(c.n); got != c.want {
			t.Errorf("Bytes(%d) = %q, want %q", c.n, got, c.want)
		}
	}
}

// syncBuffer is a writer safe for the ticker goroutine and the test.
type syncBuffer struct {
	mu sync.Mutex
	b  strings.Builder
}

func (s *syncBuffer) Write(p []byte) (int, error) {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.b.Write(p)
}

func (s *syncBuffer) String() string {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.b.String()
}

// TestUnit: WithUnit names what is counted in the lines and the closing
// line, in place of "events".
func TestUnit(t *testing.T) {
	c := &fakeClock{}
	ticks := make(chan time.Time)
	out := make(lines, 16)
	r := New(out, 0, "export", WithClock(c.now), WithTicks(ticks), WithTerminal(false, 100), WithUnit("nodes"))
	r.Add(300, 2048)
	c.advance(time.Second)
	ticks <- c.now()
	if got, want := out.next(t), "export: 2.0 KiB, 300 nodes, 300 nodes/s\n"; got != want {
		t.Fatalf("line\n%q, want\n%q", got, want)
	}
	r.Done()
	if got, want := out.next(t), "export: done, 300 nodes, 2.0 KiB in 1s (300 nodes/s)\n"; got != want {
		t.Fatalf("closing line\n%q, want\n%q", got, want)
	}
}

func TestRealTicker(t *testing.T) {
	var buf syncBuffer
	r := New(&buf, 0, "export", WithInterval(time.Millisecond))
	r.Add(1, 1)
	for i := 0; i < 5000 && !strings.Contains(buf.String(), "\n"); i++ {
		time.Sleep(time.Millisecond)
	}
	r.Done()
	got := buf.String()
	if !strings.HasPrefix(got, "export: 1 B, 1 events,") || !strings.Contains(got, "\nexport: done, 1 events, 1 B in ") {
		t.Fatalf("output %q", got)
	}
}

// A Counted total follows the events: 1,000 of 4,000 node passes in 2 s
// leaves 3,000 at 500/s, 6 s; no bytes are shown.
func TestCountedLines(t *testing.T) {
	c := &fakeClock{}
	ticks := make(chan time.Time)
	out := make(lines, 8)
	r := New(out, 4000, "recount", WithClock(c.now), WithTicks(ticks), WithTerminal(false, 80), WithUnit("node passes"), Counted())
	r.Add(1000, 0)
	c.advance(2 * time.Second)
	ticks <- c.now()
	if got, want := out.next(t), "recount:  25.0%, 1000 of 4000 node passes, 500 node passes/s, ETA 6s\n"; got != want {
		t.Fatalf("line\n%q, want\n%q", got, want)
	}
	r.Add(3000, 0)
	c.advance(2 * time.Second)
	r.Done()
	if got, want := out.next(t), "recount: done, 4000 node passes in 4s (1000 node passes/s)\n"; got != want {
		t.Fatalf("closing line\n%q, want\n%q", got, want)
	}
}
