package stream

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"time"

	"github.com/nats-io/nats.go/jetstream"
)

// DefaultManifestBucket is the key-value bucket that records how far each
// log is published.
const DefaultManifestBucket = "orbitwatch_published"

// Manifest records, per published log, how far it is stored in a stream,
// in a JetStream key-value bucket, so that publishing a log again, after
// any span of time, stores nothing twice and a publish that stopped
// resumes at the first event not stored. The server's duplicate window
// alone forgets event ids after it (DefaultDuplicateWindow).
//
// A log is known by its first event's id and the stream: a derived id
// hashes the content up to that event, so a log is known again whatever
// its file name, compression or whether it comes on standard input, and a
// log that has grown by appending is known as itself. An entry says that
// the log's records up to Line are stored and that the record after it,
// if stored, is at stream sequence Seq+1, the next at Seq+2 and so on
// (OrderedPublisher stores a log without gaps), which Resume checks
// against the stream when an entry lags behind a publish that stopped.
type Manifest struct {
	kv jetstream.KeyValue
}

// ManifestEntry is how far one log is published to one stream.
type ManifestEntry struct {
	Stream string `json:"stream"`
	// Created is the stream's creation time: a stream deleted and made
	// anew holds nothing of the log, whatever the entry says.
	Created time.Time `json:"created"`
	FirstID string    `json:"first_id"`
	// Line is the record number of the last event stored (0: none yet),
	// LastID its id.
	Line   int    `json:"line"`
	LastID string `json:"last_id,omitempty"`
	// Seq is the stream's last sequence after record Line.
	Seq uint64 `json:"seq"`
	// Name is the source as last given, for messages only.
	Name string `json:"name,omitempty"`
}

// OpenManifest opens the bucket, creating it (file storage, one value per
// key, the given replicas) when absent.
func OpenManifest(ctx context.Context, js jetstream.JetStream, bucket string, replicas int) (*Manifest, error) {
	kv, err := js.KeyValue(ctx, bucket)
	if errors.Is(err, jetstream.ErrBucketNotFound) {
		kv, err = js.CreateKeyValue(ctx, jetstream.KeyValueConfig{Bucket: bucket, History: 1, Storage: jetstream.FileStorage, Replicas: replicas,
			Description: "orbitwatch: how far each edge log is published to each stream"})
		if errors.Is(err, jetstream.ErrBucketExists) {
			kv, err = js.KeyValue(ctx, bucket)
		}
	}
	if err != nil {
		return nil, fmt.Errorf("stream: publish manifest %s: %w", bucket, err)
	}
	return &Manifest{kv: kv}, nil
}

// manifestKey is the bucket key of a log in a stream: key characters are
// restricted, ids and stream names are not.
func manifestKey(stream, firstID string) string {
	h := sha256.Sum256([]byte(stream + "\x00" + firstID))
	return "log." + hex.EncodeToString(h[:20])
}

// Get returns the entry of the log whose first event id is firstID in
// stream, and whether there is one.
func (m *Manifest) Get(ctx context.Context, stream, firstID string) (ManifestEntry, bool, error) {
	v, err := m.kv.Get(ctx, manifestKey(stream, firstID))
	if errors.Is(err, jetstream.ErrKeyNotFound) {
		return ManifestEntry{}, false, nil
	}
	if err != nil {
		return ManifestEntry{}, false, fmt.Errorf("stream: publish manifest: %w", err)
	}
	var e ManifestEntry
	if err := json.Unmarshal(v.Value(), &e); err != nil {
		return ManifestEntry{}, false, fmt.Errorf("stream: publish manifest entry %s: %w", v.Key(), err)
	}
	if e.Stream != stream || e.FirstID != firstID {
		return ManifestEntry{}, false, fmt.Errorf("stream: publish manifest entry %s is for stream %q, log %q", v.Key(), e.Stream, e.FirstID)
	}
	return e, true, nil
}

// Put records e.
func (m *Manifest) Put(ctx context.Context, e ManifestEntry) error {
	b, err := json.Marshal(e)
	if err != nil {
		return err
	}
	if _, err := m.kv.Put(ctx, manifestKey(e.Stream, e.FirstID), b); err != nil {
		return fmt.Errorf("stream: publish manifest: %w", err)
	}
	return nil
}

// StoredID returns the event id (Nats-Msg-Id) of the message at sequence
// seq of stream s, and false when there is no such message.
func StoredID(ctx context.Context, s jetstream.Stream, seq uint64) (string, bool, error) {
	m, err := s.GetMsg(ctx, seq)
	if errors.Is(err, jetstream.ErrMsgNotFound) {
		return "", false, nil
	}
	if err != nil {
		return "", false, fmt.Errorf("stream: message %d: %w", seq, err)
	}
	return m.Header.Get(jetstream.MsgIDHeader), true, nil
}
