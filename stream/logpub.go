package stream

import (
	"context"
	"errors"
	"fmt"
	"time"

	"github.com/nats-io/nats.go/jetstream"
)

// LogPublisher publishes logs, one after another, to a stream: each in
// its order or not at all (OrderedPublisher), and, with a Manifest, each
// event once whenever it is published again. For every log it looks up
// the log's entry at its first event, reads past the events the entry
// says are stored (checking that the last of them has the stored id),
// then past those the stream holds after the entry's sequence (an entry
// lags behind a publish that stopped), and publishes from the first
// event not stored. It records the entry before its first publish and as
// acknowledgements come. Other writers' messages may fall between a
// log's events (OrderedPublisher goes on after them); the stream then
// holds the log's events in its order with those between.
type LogPublisher struct {
	js      jetstream.JetStream
	s       jetstream.Stream
	name    string
	subject string
	created time.Time
	man     *Manifest
	opts    OrderedOptions

	pub   *OrderedPublisher
	stats PublishStats
	// skipped counts events found already stored without sending them.
	skipped int

	// The current log.
	logName    string
	first      bool // its first event has been seen
	entry      ManifestEntry
	verified   bool // the entry's last event was met with its id
	probing    bool
	publishing bool
	putLine    int
}

// putEvery is how many acknowledged events may pass between two manifest
// records; a stop loses at most this many records, which Resume finds in
// the stream instead.
const putEvery = 4096

// NewLogPublisher returns a publisher of logs to the stream name on
// subject. man may be nil: events are then known again only by their ids,
// within the stream's duplicate window.
func NewLogPublisher(ctx context.Context, js jetstream.JetStream, name, subject string, man *Manifest, opts OrderedOptions) (*LogPublisher, error) {
	s, err := js.Stream(ctx, name)
	if err != nil {
		return nil, fmt.Errorf("stream: stream %s: %w", name, err)
	}
	return &LogPublisher{js: js, s: s, name: name, subject: subject, created: s.CachedInfo().Created.UTC(), man: man, opts: opts}, nil
}

// Begin starts a new log, named name in the manifest and messages. The
// previous log must have ended (End) or been abandoned.
func (lp *LogPublisher) Begin(name string) {
	lp.logName, lp.first, lp.verified, lp.probing, lp.publishing, lp.putLine = name, false, false, false, false, 0
	lp.entry = ManifestEntry{}
	lp.pub = nil
}

// Event publishes ev, the log's next event in order, unless it is known
// to be stored; it returns the *PublishStopError of a stop, or an error
// when the log is not the one its manifest entry describes.
func (lp *LogPublisher) Event(ctx context.Context, ev Event) error {
	if !lp.first {
		lp.first = true
		if err := lp.lookUp(ctx, ev.ID); err != nil {
			return err
		}
	}
	if ev.Line <= lp.entry.Line {
		if ev.Line == lp.entry.Line {
			if ev.ID != lp.entry.LastID {
				return lp.differs(ev)
			}
			lp.verified = true
		}
		lp.skipped++
		return nil
	}
	if lp.entry.Line > 0 && !lp.verified {
		return lp.differs(ev)
	}
	if lp.probing {
		found, err := lp.probe(ctx, ev.ID)
		if err != nil {
			return err
		}
		if found {
			lp.entry.Line, lp.entry.LastID = ev.Line, ev.ID
			lp.verified = true
			lp.skipped++
			return nil
		}
		lp.probing = false
	}
	if !lp.publishing {
		if err := lp.start(ctx); err != nil {
			return err
		}
	}
	err := lp.pub.Publish(ctx, ev)
	if a := lp.pub.Acked(); a.ID != "" && a.Line-lp.putLine >= putEvery {
		if perr := lp.record(ctx, a); perr != nil && err == nil {
			err = perr
		}
	}
	return err
}

// lookUp reads the log's manifest entry; without one (or for a stream
// made anew) the log starts from nothing.
func (lp *LogPublisher) lookUp(ctx context.Context, firstID string) error {
	lp.entry = ManifestEntry{Stream: lp.name, Created: lp.created, FirstID: firstID, Name: lp.logName}
	if lp.man == nil {
		return nil
	}
	e, ok, err := lp.man.Get(ctx, lp.name, firstID)
	if err != nil {
		return err
	}
	if ok && e.Created.Equal(lp.created) {
		e.Name = lp.logName
		lp.entry, lp.probing = e, true
	}
	return nil
}

// maxInterleaved bounds how many other writers' messages probe reads past
// between two events of a log.
const maxInterleaved = 256

// probe looks for the message of event id just after the entry's
// sequence, past at most maxInterleaved messages of other writers, and
// moves the entry's sequence to it when found.
func (lp *LogPublisher) probe(ctx context.Context, id string) (bool, error) {
	for k := uint64(1); k <= maxInterleaved; k++ {
		got, ok, err := StoredID(ctx, lp.s, lp.entry.Seq+k)
		if err != nil || !ok {
			return false, err
		}
		if got == id {
			lp.entry.Seq += k
			return true, nil
		}
	}
	return false, nil
}

func (lp *LogPublisher) differs(ev Event) error {
	return fmt.Errorf("stream: %s begins like the log %s published to stream %s up to its record %d, but differs by line %d: "+
		"it is another log whose first event has the same id; publish it without the manifest to rely on event ids alone",
		lp.logName, lp.entry.Name, lp.name, lp.entry.Line, ev.FileLine)
}

// start records where the log's next event will be stored and makes the
// ordered publisher that stores it there.
func (lp *LogPublisher) start(ctx context.Context) error {
	info, err := lp.s.Info(ctx)
	if err != nil {
		return fmt.Errorf("stream: stream %s: %w", lp.name, err)
	}
	lp.entry.Seq = info.State.LastSeq
	if lp.man != nil {
		if err := lp.man.Put(ctx, lp.entry); err != nil {
			return err
		}
	}
	lp.putLine = lp.entry.Line
	lp.pub = NewOrderedPublisher(lp.js, lp.name, lp.subject, info.State.LastSeq, lp.opts)
	lp.publishing = true
	return nil
}

// record writes the ack point a to the manifest.
func (lp *LogPublisher) record(ctx context.Context, a AckPoint) error {
	lp.putLine = a.Line
	if lp.man == nil {
		return nil
	}
	e := lp.entry
	e.Line, e.LastID, e.Seq = a.Line, a.ID, a.Seq
	return lp.man.Put(ctx, e)
}

// End waits for the log's acknowledgements and records the log as
// published to its end. It returns the *PublishStopError of a stop.
func (lp *LogPublisher) End(ctx context.Context) error {
	if lp.pub == nil {
		return nil
	}
	err := lp.pub.Flush(ctx)
	lp.add()
	// Without a connection the record would wait for its timeout; the
	// next publish finds the events in the stream instead.
	if a := lp.pub.Acked(); a.ID != "" && lp.js.Conn().IsConnected() {
		rctx, cancel := context.WithTimeout(ctx, 5*time.Second)
		defer cancel()
		err = errors.Join(err, lp.record(rctx, a))
	}
	lp.pub = nil
	return err
}

// add moves the ordered publisher's counts to the totals.
func (lp *LogPublisher) add() {
	st := lp.pub.Stats()
	lp.stats.Stored += st.Stored
	lp.stats.Duplicates += st.Duplicates
	lp.stats.LastSeq = max(lp.stats.LastSeq, st.LastSeq)
	lp.stats.Interleaved += st.Interleaved
}

// Stats returns the counts so far: Duplicates counts both the events the
// server dropped by id and those the manifest or the stream showed to be
// stored, which were not sent.
func (lp *LogPublisher) Stats() PublishStats {
	st := lp.stats
	if lp.pub != nil {
		cur := lp.pub.Stats()
		st.Stored += cur.Stored
		st.Duplicates += cur.Duplicates
		st.LastSeq = max(st.LastSeq, cur.LastSeq)
		st.Interleaved += cur.Interleaved
	}
	st.Duplicates += lp.skipped
	return st
}
