package progress

import (
	"fmt"
	"io"
	"os"
	"strings"
	"sync"
	"sync/atomic"
	"time"

	"golang.org/x/term"
)

// Reporter prints the progress of one piece of work. Make one with New,
// call Add as work is done, and Done once at the end.
type Reporter struct {
	w      io.Writer
	label  string
	unit   string // what an event is, plural: "events", "nodes"
	total  int64
	events atomic.Int64
	bytes  atomic.Int64

	now      func() time.Time
	ticks    <-chan time.Time
	stopTick func()
	terminal bool
	width    int
	counted  bool // total counts units (events), not bytes
	interval time.Duration

	start    time.Time
	mu       sync.Mutex // serialises writes to w
	quit     chan struct{}
	finished chan struct{}
	doneOnce sync.Once
}

// Option changes how a Reporter works.
type Option func(*Reporter)

// WithClock makes the Reporter read time from now instead of time.Now.
func WithClock(now func() time.Time) Option { return func(r *Reporter) { r.now = now } }

// WithTicks makes the Reporter render on each value of ticks instead of on
// its own ticker. Tests drive it with a channel and a fake clock.
func WithTicks(ticks <-chan time.Time) Option { return func(r *Reporter) { r.ticks = ticks } }

// WithInterval sets how often a line is rendered: default 200 ms on a
// terminal, 10 s otherwise. It must be positive.
func WithInterval(d time.Duration) Option {
	if d <= 0 {
		panic("progress: interval must be positive")
	}
	return func(r *Reporter) { r.interval = d }
}

// WithUnit names what Add counts (plural, e.g. "nodes", "phases") in the
// lines; the default is "events".
func WithUnit(plural string) Option { return func(r *Reporter) { r.unit = plural } }

// Counted makes total a count of what Add's events count (the unit of
// WithUnit), for work measured in units rather than bytes read: the
// percentage, bar and ETA follow the events, and no bytes are shown.
func Counted() Option { return func(r *Reporter) { r.counted = true } }

// WithTerminal forces terminal (redrawn line of the given width) or plain
// mode instead of asking the writer.
func WithTerminal(on bool, width int) Option {
	return func(r *Reporter) { r.terminal, r.width = on, width }
}

// New starts a Reporter writing to w for work of total bytes (total ≤ 0
// when the size is not known: no percentage, bar or ETA then). It is in
// terminal mode when w is an *os.File on a terminal.
func New(w io.Writer, total int64, label string, opts ...Option) *Reporter {
	r := &Reporter{w: w, label: label, unit: "events", total: total, now: time.Now, width: 80,
		quit: make(chan struct{}), finished: make(chan struct{})}
	if f, ok := w.(*os.File); ok && term.IsTerminal(int(f.Fd())) {
		r.terminal = true
		if cols, _, err := term.GetSize(int(f.Fd())); err == nil && cols > 20 {
			r.width = cols
		}
	}
	for _, o := range opts {
		o(r)
	}
	if r.interval == 0 {
		r.interval = 10 * time.Second
		if r.terminal {
			r.interval = 200 * time.Millisecond
		}
	}
	if r.ticks == nil {
		t := time.NewTicker(r.interval)
		r.ticks, r.stopTick = t.C, t.Stop
	}
	r.start = r.now()
	go r.loop()
	return r
}

// Add records events more events and bytes more bytes done. It is safe
// for concurrent use and allocates nothing.
func (r *Reporter) Add(events, bytes int64) {
	r.events.Add(events)
	r.bytes.Add(bytes)
}

// Done stops the Reporter and writes a closing line with the totals and
// the elapsed time. Later calls do nothing.
func (r *Reporter) Done() {
	r.doneOnce.Do(func() {
		close(r.quit)
		<-r.finished
		if r.stopTick != nil {
			r.stopTick()
		}
		el := r.now().Sub(r.start)
		ev := r.events.Load()
		line := fmt.Sprintf("%s: done, %d %s, %s in %s (%s %s/s)",
			r.label, ev, r.unit, Bytes(r.bytes.Load()), el.Round(time.Millisecond), rate(ev, el), r.unit)
		if r.counted {
			line = fmt.Sprintf("%s: done, %d %s in %s (%s %s/s)", r.label, ev, r.unit, el.Round(time.Millisecond), rate(ev, el), r.unit)
		}
		r.mu.Lock()
		defer r.mu.Unlock()
		if r.terminal {
			fmt.Fprintf(r.w, "\r%s\x1b[K\n", line)
		} else {
			fmt.Fprintln(r.w, line)
		}
	})
}

func (r *Reporter) loop() {
	defer close(r.finished)
	for {
		select {
		case <-r.quit:
			return
		case <-r.ticks:
			r.render()
		}
	}
}

// render writes the current state. Rates are averages since New; the ETA
// is (total − done) / (done per second so far), done being the bytes, or
// the events of a Counted total.
func (r *Reporter) render() {
	el := r.now().Sub(r.start)
	ev, by := r.events.Load(), r.bytes.Load()
	done := by // what total counts
	if r.counted {
		done = ev
	}
	var b strings.Builder
	if r.terminal {
		b.WriteString("\r")
	}
	b.WriteString(r.label)
	if r.terminal && r.total > 0 {
		b.WriteString(" ")
		b.WriteString(bar(done, r.total, 20))
	} else {
		b.WriteString(":")
	}
	pct := 100 * float64(min(done, r.total)) / float64(max(r.total, 1))
	switch {
	case r.counted && r.total > 0:
		fmt.Fprintf(&b, " %5.1f%%, %d of %d %s,", pct, ev, r.total, r.unit)
	case r.counted:
		fmt.Fprintf(&b, " %d %s,", ev, r.unit)
	case r.total > 0:
		fmt.Fprintf(&b, " %5.1f%% of %s, %d %s,", pct, Bytes(r.total), ev, r.unit)
	default:
		fmt.Fprintf(&b, " %s, %d %s,", Bytes(by), ev, r.unit)
	}
	fmt.Fprintf(&b, " %s %s/s", rate(ev, el), r.unit)
	if r.total > 0 {
		b.WriteString(", ETA ")
		b.WriteString(eta(done, r.total, el))
	}
	r.write(b.String())
}

// write puts one rendered line out: redrawn in place on a terminal.
func (r *Reporter) write(line string) {
	r.mu.Lock()
	defer r.mu.Unlock()
	if r.terminal {
		if len(line) > r.width+1 {
			line = line[:r.width+1]
		}
		io.WriteString(r.w, line+"\x1b[K")
	} else {
		io.WriteString(r.w, line+"\n")
	}
}

// bar draws done/total as width cells of '#' and '.', inside brackets.
func bar(done, total int64, width int) string {
	full := int(int64(width) * min(done, total) / total)
	return "[" + strings.Repeat("#", full) + strings.Repeat(".", width-full) + "]"
}

// rate formats n/el per second with a k or M suffix; "-" before any time
// has passed.
func rate(n int64, el time.Duration) string {
	if el <= 0 {
		return "-"
	}
	x := float64(n) / el.Seconds()
	switch {
	case x >= 1e6:
		return fmt.Sprintf("%.2fM", x/1e6)
	case x >= 1e4:
		return fmt.Sprintf("%.1fk", x/1e3)
	}
	return fmt.Sprintf("%.0f", x)
}

// eta is the time left at the average byte rate so far, "?" when no byte
// is done yet.
func eta(done, total int64, el time.Duration) string {
	if done <= 0 || el <= 0 {
		return "?"
	}
	if done >= total {
		return "0s"
	}
	left := time.Duration(float64(el) * float64(total-done) / float64(done))
	return left.Round(time.Second).String()
}

// Bytes formats n bytes with a binary unit: 512 B, 1.5 KiB, 3.2 GiB.
func Bytes(n int64) string {
	const unit = 1024
	if n < unit {
		return fmt.Sprintf("%d B", n)
	}
	div, exp := int64(unit), 0
	for m := n / unit; m >= unit && exp < 5; m /= unit {
		div *= unit
		exp++
	}
	return fmt.Sprintf("%.1f %ciB", float64(n)/float64(div), "KMGTPE"[exp])
}
