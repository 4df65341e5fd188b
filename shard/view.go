package shard

import (
	"context"
	"time"

	"orbitwatch/storage"
)

// View is what the HTTP API reads from a running worker. All methods are
// safe for concurrent use while the worker runs.
type View interface {
	// Store is the worker's Badger store: every cut of the whole state.
	Store() *storage.Store
	// Counting is the catalog (orbit names, kind, max nodes) in use.
	Counting() *Counting
	// Status is a snapshot of the worker's progress.
	Status() Status
	// Shard returns this worker's shard and the shard count.
	Shard() (i, n int)
	// Owner returns the shard that owns node id (scores and alerts it):
	// OwnerOf(node, n).
	Owner(node string) int
	// Read answers a node read, now or as of a cut; the reply's Status
	// says how it went (200, 404, …); the error is for failures to read
	// at all.
	Read(ctx context.Context, req ReadRequest) (ReadReply, error)
	// SetObserver registers o to hear of cut timings (for metrics); nil
	// stops it. Calls must return quickly.
	SetObserver(o Observer)
}

// Status is a snapshot of one worker's progress.
type Status struct {
	Shard, Shards int
	// AppliedSeq is the last log sequence this worker has read and
	// applied: reads without an as-of point see the state there.
	AppliedSeq uint64
	// CutSeq is the last cut taken; CommittedSeq the last cut durable in
	// the store (as-of reads and alerts reach it).
	CutSeq, CommittedSeq uint64
	// StreamLastSeq is the log stream's last sequence, as last seen.
	StreamLastSeq uint64
	// Lag is StreamLastSeq − AppliedSeq (0 when caught up).
	Lag uint64
	// Ready is true once the worker has applied the log up to where it
	// stood when the worker started, while its cuts become durable.
	Ready bool
	// CommitRetries counts the commits the store refused for want of
	// space (storage.ErrNoSpace) and the worker tried again; Stalled says
	// which refusal it is waiting out now, without paths
	// (storage.SpaceError.Reason), "" while commits go through. A stalled
	// worker is not Ready.
	CommitRetries uint64
	Stalled       string
	// Applied counts accepted events, Expired window expiries; Rejected
	// counts rejected events and malformed bus messages by reason (all up
	// to AppliedSeq).
	Applied, Expired uint64
	Rejected         map[string]uint64
	// Watermark is the event-time watermark at CommittedSeq.
	Watermark time.Time
	// StartedAt is when the worker started; CommittedAt when the last cut
	// became durable (zero before the first).
	StartedAt, CommittedAt time.Time
	// AlertsPublished counts alerts published on the bus.
	AlertsPublished uint64
}

// Observer hears of a worker's timings as they happen.
type Observer interface {
	// Batch is the time from reading the log message that ended a cut to
	// the cut being handed to the committer.
	Batch(d time.Duration)
	// Cut is the time from reading the log message that ended a cut to
	// the cut being durable.
	Cut(d time.Duration)
}

// ReadRequest asks for one node's orbit vector.
type ReadRequest struct {
	Node string `json:"node"`
	// At, when not zero, reads as of the latest cut whose event-time
	// watermark is ≤ At; Seq, when not zero, as of the latest cut ≤ Seq;
	// neither reads the in-memory state at the last applied event.
	At  time.Time `json:"at,omitzero"`
	Seq uint64    `json:"seq,omitempty"`
}

// ReadReply is a node read's answer, in the shape of the API's JSON.
type ReadReply struct {
	// Status is an HTTP status code: 200, 404 (node unknown, or no cut at
	// At), 410 (At is before the retained history), 500.
	Status    int       `json:"-"`
	Node      string    `json:"node"`
	Kind      string    `json:"kind"`
	MaxNodes  int       `json:"max_nodes"`
	Seq       uint64    `json:"seq"`
	EventTime time.Time `json:"event_time,omitzero"`
	Orbits    []uint64  `json:"orbits"`
	// Error says what went wrong when Status is not 200.
	Error string `json:"error,omitempty"`
	// Shard is the shard that answered.
	Shard int `json:"shard"`
}
