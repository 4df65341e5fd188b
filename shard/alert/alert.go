package alert

import (
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"time"

	"orbitwatch/storage"
)

// Alert is one rule firing for one node at one cut. Its JSON field names
// are stable: the API, the store and webhooks all carry this shape.
type Alert struct {
	// ID is deterministic: the first 16 hex digits of SHA-256 over the
	// rule name, a zero byte, the node id, a zero byte and the cut's
	// sequence as 8 big-endian bytes (see AlertID). A replay of the log
	// gives the same ids, so a resent alert is a duplicate.
	ID   string `json:"id"`
	Rule string `json:"rule"`
	Kind string `json:"kind"`
	Node string `json:"node"`
	// Seq and EventTime are the cut's; DetectedAt is the wall-clock time
	// the cut was evaluated (zero when the caller gave none).
	Seq        uint64    `json:"seq"`
	EventTime  time.Time `json:"event_time"`
	DetectedAt time.Time `json:"detected_at,omitzero"`
	// Score is the rule's measure (distance, count or growth ratio) and
	// Fire the level it reached.
	Score float64 `json:"score"`
	Fire  float64 `json:"fire"`
	// Baseline is "lookback", "decayed" or "none" (the node had no
	// baseline: before counts are then 0).
	Baseline string `json:"baseline"`
	Degree   int    `json:"degree"`
	// Orbits are the orbits that moved most, the rule's own orbit first
	// for orbit rules.
	Orbits []OrbitMove `json:"orbits"`
}

// OrbitMove is one orbit's count before (baseline; a decayed average may
// be fractional) and after (now), with its plain names from the catalog.
type OrbitMove struct {
	Orbit    int     `json:"orbit"`
	Name     string  `json:"name"`
	Graphlet string  `json:"graphlet"`
	Before   float64 `json:"before"`
	After    uint64  `json:"after"`
}

// AlertID returns the deterministic id of rule firing for node at cut seq
// (see Alert.ID).
func AlertID(rule, node string, seq uint64) string {
	h := sha256.New()
	h.Write([]byte(rule))
	h.Write([]byte{0})
	h.Write([]byte(node))
	h.Write([]byte{0})
	var b [8]byte
	binary.BigEndian.PutUint64(b[:], seq)
	h.Write(b[:])
	var sum [sha256.Size]byte
	return hex.EncodeToString(h.Sum(sum[:0])[:8])
}

// Records returns the alerts as storage records for Store.PutAlerts, the
// body being each alert's JSON. All alerts must belong to one cut.
func Records(alerts []Alert) []storage.AlertRecord {
	out := make([]storage.AlertRecord, len(alerts))
	for i := range alerts {
		a := &alerts[i]
		body, err := json.Marshal(a)
		if err != nil {
			panic("alert: an alert does not marshal to JSON: " + err.Error())
		}
		out[i] = storage.AlertRecord{Seq: a.Seq, ID: a.ID, EventTime: a.EventTime, Node: a.Node, Rule: a.Rule, Body: body}
	}
	return out
}

// FromRecord decodes a stored alert.
func FromRecord(r storage.AlertRecord) (Alert, error) {
	var a Alert
	if err := json.Unmarshal(r.Body, &a); err != nil {
		return Alert{}, fmt.Errorf("alert %d/%s: %w", r.Seq, r.ID, err)
	}
	if a.ID != r.ID || a.Seq != r.Seq {
		return Alert{}, fmt.Errorf("alert %d/%s: body is alert %d/%s", r.Seq, r.ID, a.Seq, a.ID)
	}
	return a, nil
}
