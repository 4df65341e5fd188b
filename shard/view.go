package shard

import (
	"context"
	"time"

	"orbitwatch/storage"
)

// View is what the HTTP API reads from a running worker. All methods are
// safe for concurrent use while the worker runs.
type View interface {
	// Store is the worker's Badger store. Reads at its last complete
	// checkpoint are consistent: that checkpoint is the last complete cut.
	// Only the vectors of nodes this shard owns are meaningful in it; the
	// dictionary and adjacency are whole.
	Store() *storage.Store
	// Counting is the catalog (orbit names, kind, max nodes) in use.
	Counting() *Counting
	// Status is a snapshot of the worker's progress.
	Status() Status
	// Shard returns this worker's shard and the shard count.
	Shard() (i, n int)
	// Owner returns the shard that owns node id: OwnerOf(node, n).
	Owner(node string) int
	// Read answers a node read: locally when this shard owns the node,
	// else by forwarding it over NATS request/reply to the owner's
	// ReadSubject. The reply's Status says how it went (200, 404, …);
	// the error is for transport failures only.
	Read(ctx context.Context, req ReadRequest) (ReadReply, error)
	// SetObserver registers o to hear of batch and cut timings (for
	// metrics); nil stops it. Calls come from the worker's goroutine and
	// must return quickly.
	SetObserver(o Observer)
}

// Status is a snapshot of one worker's progress.
type Status struct {
	Shard, Shards int
	// AppliedSeq is the last log sequence this worker has read and
	// applied to its adjacency (and computed deltas for).
	AppliedSeq uint64
	// CutSeq is the last complete cut: every shard's deltas up to it are
	// applied here and committed to the store.
	CutSeq uint64
	// StreamLastSeq is the log stream's last sequence, as last seen.
	StreamLastSeq uint64
	// Lag is StreamLastSeq − CutSeq (0 when caught up).
	Lag uint64
	// Ready is true once the cut has reached the log position the
	// worker started behind.
	Ready bool
	// Applied counts accepted events, Expired window expiries; Rejected
	// counts rejected events and malformed bus messages by reason.
	Applied, Expired uint64
	Rejected         map[string]uint64
	// Watermark is the largest event time seen.
	Watermark time.Time
	// StartedAt is when the worker started; CutAt when the last cut
	// was committed (zero before the first).
	StartedAt, CutAt time.Time
}

// Observer hears of a worker's timings as they happen.
type Observer interface {
	// Batch is the time from reading a batch's first log message to
	// sending its deltas to their owners.
	Batch(d time.Duration)
	// Cut is the time from reading a batch's last log message to the
	// cut being committed on this worker.
	Cut(d time.Duration)
}

// ReadRequest asks for one node's orbit vector.
type ReadRequest struct {
	Node string `json:"node"`
	// At, when not zero, reads as of the latest cut whose event-time
	// watermark is ≤ At; zero reads the last complete cut.
	At time.Time `json:"at,omitzero"`
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
