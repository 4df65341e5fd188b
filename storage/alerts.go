package storage

import (
	"encoding/binary"
	"errors"
	"fmt"
	"sort"
	"time"

	badger "github.com/dgraph-io/badger/v4"
)

// Alert records. Two more key prefixes beside those in layout.go:
//
//	'a' seq(8) id          alert: watermark(8), uvarint len, node,
//	                       uvarint len, rule, body (the alert's JSON)
//	'o' len(4) node seq(8) id   per-node index of alerts, empty value
//
// Both are written once, with their cut's checkpoint (Checkpoint.Alerts),
// at Badger version = the cut's seq, so an alert is visible exactly to
// readers at that cut or later, and retention (which keeps the latest
// version of every key at or below the floor) never drops one. Keys start
// with the seq, so "since" scans seek straight to it.
const (
	pAlert     = 'a'
	pAlertNode = 'o'
)

// AlertRecord is one stored alert. The store reads Seq, ID, EventTime, Node
// and Rule for keys and filters; Body is opaque to it (the alert as JSON,
// see package shard/alert).
type AlertRecord struct {
	Seq       uint64
	ID        string
	EventTime time.Time
	Node      string
	Rule      string
	Body      []byte
}

// AlertFilter selects alerts; zero fields select everything.
type AlertFilter struct {
	// SinceSeq keeps alerts of cuts after it (Seq > SinceSeq), the
	// position a poller saw last.
	SinceSeq uint64
	// SinceTime keeps alerts with EventTime ≥ SinceTime, UntilTime (when
	// not zero) those with EventTime ≤ UntilTime.
	SinceTime, UntilTime time.Time
	// Node and Rule keep alerts of that node or rule only.
	Node, Rule string
	// Limit caps the answer (0: no cap). Oldest first, unless Newest:
	// then the last Limit matches, newest first.
	Limit  int
	Newest bool
}

// checkAlerts holds the alerts of the checkpoint at seq to their
// preconditions: every record's Seq is seq, its ID non-empty and unique in
// the cut, its EventTime storable (the cut's watermark or earlier).
func checkAlerts(seq uint64, recs []AlertRecord) error {
	seen := make(map[string]bool, len(recs))
	for i := range recs {
		r := &recs[i]
		if r.Seq != seq || r.ID == "" || seen[r.ID] {
			return fmt.Errorf("alert record %d has seq %d and id %q (want seq %d and a unique id)", i, r.Seq, r.ID, seq)
		}
		seen[r.ID] = true
		if _, err := watermarkBits(r.EventTime); err != nil {
			return fmt.Errorf("alert %s: %w", r.ID, err)
		}
	}
	return nil
}

// putAlerts writes the alerts of the checkpoint at w.seq: the record and
// its node index entry.
func putAlerts(w *batchWriter, recs []AlertRecord) error {
	for i := range recs {
		r := &recs[i]
		val := binary.BigEndian.AppendUint64(make([]byte, 0, 16+len(r.Node)+len(r.Rule)+len(r.Body)), mustBits(r.EventTime))
		val = appendLenString(val, r.Node)
		val = appendLenString(val, r.Rule)
		val = append(val, r.Body...)
		if err := errors.Join(
			w.put(alertKey(w.seq, r.ID), val, false),
			w.put(alertNodeKey(r.Node, w.seq, r.ID), []byte{}, false),
		); err != nil {
			return err
		}
	}
	return nil
}

func appendLenString(b []byte, s string) []byte {
	return append(binary.AppendUvarint(b, uint64(len(s))), s...)
}

func alertKey(seq uint64, id string) []byte {
	k := keySeq(pAlert, seq)
	return append(k, id...)
}

func alertNodePrefix(node string) []byte {
	k := make([]byte, 5, 5+len(node)+8)
	k[0] = pAlertNode
	binary.BigEndian.PutUint32(k[1:], uint32(len(node)))
	return append(k, node...)
}

func alertNodeKey(node string, seq uint64, id string) []byte {
	k := binary.BigEndian.AppendUint64(alertNodePrefix(node), seq)
	return append(k, id...)
}

// Alerts lists the stored alerts that f selects, as of the last complete
// checkpoint, ordered by (Seq, ID) (reversed with f.Newest). A node
// filter walks that node's index only; the others are checked record by
// record after seeking to the first candidate seq. Under PutAlerts's
// precondition (an alert's event time is at most its cut's watermark) a
// time filter also seeks: to the first checkpoint whose watermark is ≥
// SinceTime.
func (st *Store) Alerts(f AlertFilter) ([]AlertRecord, error) {
	st.mu.RLock()
	at := st.complete
	from := f.SinceSeq + 1
	if !f.SinceTime.IsZero() {
		i := sort.Search(len(st.cps), func(i int) bool { return !st.cps[i].Watermark.Before(f.SinceTime) })
		if i < len(st.cps) {
			from = max(from, st.cps[i].Seq)
		} else {
			from = max(from, at+1)
		}
	}
	st.mu.RUnlock()
	if f.SinceSeq == ^uint64(0) || from > at {
		return nil, nil
	}
	txn := st.db.NewTransactionAt(at, false)
	defer txn.Discard()
	var prefix []byte
	if f.Node != "" {
		prefix = alertNodePrefix(f.Node)
	} else {
		prefix = []byte{pAlert}
	}
	it := txn.NewIterator(badger.IteratorOptions{Prefix: prefix, Reverse: f.Newest, PrefetchValues: f.Node == ""})
	defer it.Close()
	lo := binary.BigEndian.AppendUint64(append([]byte{}, prefix...), from)
	if f.Newest {
		it.Seek(binary.BigEndian.AppendUint64(append([]byte{}, prefix...), at+1))
	} else {
		it.Seek(lo)
	}
	var out []AlertRecord
	for ; it.Valid(); it.Next() {
		key := it.Item().Key()
		if len(key) < len(prefix)+8 {
			return nil, fmt.Errorf("storage: corrupt alert key %x", key)
		}
		seq := beUint64(key[len(prefix):])
		if seq < from {
			if f.Newest {
				break
			}
			continue
		}
		if seq > at {
			if f.Newest {
				continue
			}
			break
		}
		item := it.Item()
		if f.Node != "" {
			id := string(key[len(prefix)+8:])
			var err error
			if item, err = txn.Get(alertKey(seq, id)); err != nil {
				return nil, fmt.Errorf("storage: alert %d/%s in the node index: %w", seq, id, err)
			}
		}
		rec, err := decodeAlert(item)
		if err != nil {
			return nil, err
		}
		if (f.Rule != "" && rec.Rule != f.Rule) || rec.EventTime.Before(f.SinceTime) || (!f.UntilTime.IsZero() && rec.EventTime.After(f.UntilTime)) {
			continue
		}
		out = append(out, rec)
		if f.Limit > 0 && len(out) == f.Limit {
			break
		}
	}
	return out, nil
}

func decodeAlert(item *badger.Item) (AlertRecord, error) {
	key := item.Key()
	rec := AlertRecord{Seq: beUint64(key[1:9]), ID: string(key[9:])}
	err := item.Value(func(b []byte) error {
		if len(b) < 8 {
			return errors.New("short value")
		}
		rec.EventTime = watermarkTime(beUint64(b))
		b = b[8:]
		for _, s := range []*string{&rec.Node, &rec.Rule} {
			n, k := binary.Uvarint(b)
			if k <= 0 || n > uint64(len(b)-k) {
				return errors.New("bad string length")
			}
			*s = string(b[k : k+int(n)])
			b = b[k+int(n):]
		}
		rec.Body = append([]byte{}, b...)
		return nil
	})
	if err != nil {
		return AlertRecord{}, fmt.Errorf("storage: corrupt alert record %d/%s: %w", rec.Seq, rec.ID, err)
	}
	return rec, nil
}
