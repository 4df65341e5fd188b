package storage

import (
	"encoding/binary"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"slices"
	"sync"
	"time"
	"unicode/utf8"

	badger "github.com/dgraph-io/badger/v4"
)

// Triage verdicts. One more key prefix beside those in layout.go and
// alerts.go:
//
//	'v' len(4) alert-id stamp(8)   a verdict on the alert, as JSON
//
// Every verdict is its own key, so a later verdict on an alert does not
// overwrite an earlier one: the latest stamp is the verdict in force and
// the others are its history. Verdicts are what investigators said, not a
// function of the log, so they are not versioned by cut: they are written
// at Badger version 1 (where the settings record lives), visible to a read
// at any cut, never torn by a crashed checkpoint (repair looks above the
// last complete one only) and never dropped by retention (a key with one
// version keeps it).
const pVerdict = 'v'

// verdictVersion is the Badger version verdicts are written at.
const verdictVersion = 1

// The verdicts an investigator gives an alert.
const (
	// VerdictConfirmed: the alert found a real case (a label for
	// measuring rules against).
	VerdictConfirmed = "confirmed"
	// VerdictDismissed: looked at, nothing there.
	VerdictDismissed = "dismissed"
	// VerdictNeedsMore: looked at, undecided until more is known.
	VerdictNeedsMore = "needs-more"
)

// VerdictNames lists the verdicts in the order a page offers them.
var VerdictNames = []string{VerdictConfirmed, VerdictDismissed, VerdictNeedsMore}

// MaxNoteBytes caps a verdict's note.
const MaxNoteBytes = 4000

// Verdict is one triage verdict on one stored alert: what was said, by
// whom and when, with the alert's node, rule, cut and event time copied so
// that a verdict alone can serve as a label (node, time known).
type Verdict struct {
	AlertID   string    `json:"alert_id"`
	AlertSeq  uint64    `json:"alert_seq"`
	Node      string    `json:"node"`
	Rule      string    `json:"rule"`
	EventTime time.Time `json:"event_time"`
	// Verdict is one of VerdictNames; Note is free text (at most
	// MaxNoteBytes of UTF-8).
	Verdict string `json:"verdict"`
	Note    string `json:"note"`
	// By is the caller's name (as the API's guard admitted it), Role its
	// role; At the wall-clock time the verdict was given.
	By   string    `json:"by"`
	Role string    `json:"role"`
	At   time.Time `json:"at"`
}

// ErrBadVerdict is wrapped by PutVerdict's refusals of bad input.
var ErrBadVerdict = errors.New("bad verdict")

// ErrNoAlert is the answer for a verdict on an alert the store does not
// hold.
var ErrNoAlert = errors.New("no such alert in this store")

// verdictMu serialises verdict writes, so that two verdicts given at the
// same moment on one alert get distinct, ordered stamps. Verdicts come at
// the pace of people; one lock for every store costs nothing.
var verdictMu sync.Mutex

func verdictPrefix(alertID string) []byte {
	k := make([]byte, 5, 5+len(alertID)+8)
	k[0] = pVerdict
	binary.BigEndian.PutUint32(k[1:], uint32(len(alertID)))
	return append(k, alertID...)
}

// checkVerdict says what is wrong with v as input, nil when nothing.
func checkVerdict(v *Verdict) error {
	switch {
	case !slices.Contains(VerdictNames, v.Verdict):
		return fmt.Errorf("%w: %q: want one of %v", ErrBadVerdict, v.Verdict, VerdictNames)
	case len(v.Note) > MaxNoteBytes:
		return fmt.Errorf("%w: note of %d bytes: at most %d", ErrBadVerdict, len(v.Note), MaxNoteBytes)
	case !utf8.ValidString(v.Note):
		return fmt.Errorf("%w: note not valid UTF-8", ErrBadVerdict)
	case v.At.IsZero():
		return fmt.Errorf("%w: no time given", ErrBadVerdict)
	}
	return nil
}

// PutVerdict records v on the stored alert v.AlertSeq/v.AlertID, whose
// node, rule and event time it copies into v. It returns ErrNoAlert for an
// alert the store does not hold at its last complete checkpoint, and an
// error naming the field for a verdict outside VerdictNames, an over-long
// or non-UTF-8 note or a zero At (wrapping ErrBadVerdict). The verdict is synced to disk before
// PutVerdict returns. A verdict given at the same At as (or earlier than)
// the alert's latest one is stamped just after it: the latest given is the
// one in force.
func (st *Store) PutVerdict(v Verdict) (Verdict, error) {
	if st.readOnly {
		return Verdict{}, errors.New("storage: verdict: store opened read-only")
	}
	if err := checkVerdict(&v); err != nil {
		return Verdict{}, err
	}
	rec, err := st.Alert(v.AlertSeq, v.AlertID)
	if err != nil {
		return Verdict{}, err
	}
	v.Node, v.Rule, v.EventTime, v.At = rec.Node, rec.Rule, rec.EventTime, v.At.UTC()
	body, err := json.Marshal(v)
	if err != nil {
		panic("storage: a verdict does not marshal: " + err.Error())
	}
	verdictMu.Lock()
	defer verdictMu.Unlock()
	stamp := uint64(v.At.UnixNano())
	if last, ok, err := st.lastVerdictStamp(v.AlertID); err != nil {
		return Verdict{}, err
	} else if ok && stamp <= last {
		stamp = last + 1
	}
	if err := checkRoom(st.dir, "record a verdict", uint64(len(body))+128, st.Seq()); err != nil {
		return Verdict{}, fmt.Errorf("storage: verdict on alert %s: %w", v.AlertID, err)
	}
	txn := st.db.NewTransactionAt(math.MaxUint64, true)
	defer txn.Discard()
	if err := txn.Set(binary.BigEndian.AppendUint64(verdictPrefix(v.AlertID), stamp), body); err != nil {
		return Verdict{}, fmt.Errorf("storage: verdict on alert %s: %w", v.AlertID, err)
	}
	if err := txn.CommitAt(verdictVersion, nil); err != nil {
		return Verdict{}, fmt.Errorf("storage: verdict on alert %s: %w", v.AlertID, err)
	}
	if err := st.db.Sync(); err != nil {
		return Verdict{}, fmt.Errorf("storage: verdict on alert %s: %w", v.AlertID, err)
	}
	return v, nil
}

// Alert returns the stored alert of the cut seq with this id, as of the
// last complete checkpoint, or ErrNoAlert.
func (st *Store) Alert(seq uint64, id string) (AlertRecord, error) {
	at := st.Seq()
	if seq == 0 || seq > at || id == "" {
		return AlertRecord{}, ErrNoAlert
	}
	txn := st.db.NewTransactionAt(at, false)
	defer txn.Discard()
	item, err := txn.Get(alertKey(seq, id))
	if errors.Is(err, badger.ErrKeyNotFound) {
		return AlertRecord{}, ErrNoAlert
	}
	if err != nil {
		return AlertRecord{}, fmt.Errorf("storage: alert %d/%s: %w", seq, id, err)
	}
	return decodeAlert(item)
}

// FindAlert returns the stored alert with this id (alert ids are unique:
// a hash of rule, node and cut). It walks the alert keys without their
// values: O(alerts stored), for the pace of a person triaging, not for
// hot paths.
func (st *Store) FindAlert(id string) (AlertRecord, error) {
	if id == "" {
		return AlertRecord{}, ErrNoAlert
	}
	at := st.Seq()
	if at == 0 {
		return AlertRecord{}, ErrNoAlert
	}
	txn := st.db.NewTransactionAt(at, false)
	defer txn.Discard()
	it := txn.NewIterator(badger.IteratorOptions{Prefix: []byte{pAlert}})
	defer it.Close()
	for it.Rewind(); it.Valid(); it.Next() {
		k := it.Item().Key()
		if len(k) == 9+len(id) && string(k[9:]) == id {
			return decodeAlert(it.Item())
		}
	}
	return AlertRecord{}, ErrNoAlert
}

func (st *Store) lastVerdictStamp(alertID string) (uint64, bool, error) {
	txn := st.db.NewTransactionAt(math.MaxUint64, false)
	defer txn.Discard()
	prefix := verdictPrefix(alertID)
	it := txn.NewIterator(badger.IteratorOptions{Prefix: prefix, Reverse: true})
	defer it.Close()
	it.Seek(binary.BigEndian.AppendUint64(append([]byte{}, prefix...), math.MaxUint64))
	if !it.Valid() {
		return 0, false, nil
	}
	k := it.Item().Key()
	if len(k) != len(prefix)+8 {
		return 0, false, fmt.Errorf("storage: corrupt verdict key %x", k)
	}
	return beUint64(k[len(prefix):]), true, nil
}

// Verdicts returns the verdict in force (the latest given) on every alert
// that has one, by alert id.
func (st *Store) Verdicts() (map[string]Verdict, error) {
	out := map[string]Verdict{}
	err := st.scanVerdicts([]byte{pVerdict}, func(v Verdict) {
		// Keys of one alert sort by stamp, so the last seen is the latest.
		out[v.AlertID] = v
	})
	return out, err
}

// VerdictHistory returns every verdict given on the alert, oldest first;
// the last is the one in force.
func (st *Store) VerdictHistory(alertID string) ([]Verdict, error) {
	var out []Verdict
	err := st.scanVerdicts(verdictPrefix(alertID), func(v Verdict) { out = append(out, v) })
	return out, err
}

func (st *Store) scanVerdicts(prefix []byte, f func(Verdict)) error {
	txn := st.db.NewTransactionAt(math.MaxUint64, false)
	defer txn.Discard()
	it := txn.NewIterator(badger.IteratorOptions{Prefix: prefix, PrefetchValues: true})
	defer it.Close()
	for it.Rewind(); it.Valid(); it.Next() {
		item := it.Item()
		var v Verdict
		if err := item.Value(func(b []byte) error { return json.Unmarshal(b, &v) }); err != nil {
			return fmt.Errorf("storage: corrupt verdict %x: %w", item.Key(), err)
		}
		f(v)
	}
	return nil
}
