package storage

import (
	"errors"
	"fmt"
	"maps"
	"slices"
	"strings"
	"testing"
	"time"

	"orbitwatch/delta"
)

// TestVerdicts: a verdict names a stored alert and copies its node, rule
// and event time; a later verdict is the one in force while the earlier
// ones stay in its history, in the order given even when the clock gives
// two the same time; bad input is refused naming the field; an alert the
// store does not hold (unknown id, a cut not yet complete) is ErrNoAlert;
// verdicts survive a reopen, are read by a read-only open, and outlast
// retention and compaction.
func TestVerdicts(t *testing.T) {
	dir := t.TempDir()
	a := openAlertStore(t, dir)
	var all []AlertRecord
	for seq := uint64(10); seq <= 60; seq += 10 {
		recs := alertsOfCut(seq)
		a.commit(seq, recs...)
		all = append(all, recs...)
	}
	st := a.st
	when := time.Date(2026, 5, 5, 14, 0, 0, 0, time.FixedZone("CEST", 2*3600))
	first, second, third := all[0], all[3], all[len(all)-1]

	give := func(rec AlertRecord, verdict, note, by string, at time.Time) Verdict {
		t.Helper()
		v, err := st.PutVerdict(Verdict{AlertID: rec.ID, AlertSeq: rec.Seq, Verdict: verdict, Note: note, By: by, Role: "admin", At: at})
		if err != nil {
			t.Fatalf("verdict on %s: %v", rec.ID, err)
		}
		return v
	}
	v1 := give(first, VerdictNeedsMore, "ask the bank", "oncall", when)
	if v1.Node != first.Node || v1.Rule != first.Rule || !v1.EventTime.Equal(first.EventTime) || v1.At.Location() != time.UTC {
		t.Fatalf("verdict %+v does not carry alert %+v (or its time is not UTC)", v1, first)
	}
	// Same wall-clock time: the second given is still the one in force.
	give(first, VerdictConfirmed, "card testing, case 17", "lead", when)
	give(second, VerdictDismissed, "", "oncall", when.Add(time.Minute))
	give(third, VerdictConfirmed, "", "oncall", when.Add(-time.Hour)) // clocks differ; only per alert order matters

	check := func(st *Store) {
		t.Helper()
		got, err := st.Verdicts()
		if err != nil {
			t.Fatal(err)
		}
		want := map[string]string{first.ID: VerdictConfirmed, second.ID: VerdictDismissed, third.ID: VerdictConfirmed}
		if len(got) != len(want) {
			t.Fatalf("verdicts on %v, want %v", slices.Sorted(maps.Keys(got)), want)
		}
		for id, w := range want {
			if got[id].Verdict != w || got[id].AlertID != id {
				t.Errorf("verdict on %s: %+v, want %s", id, got[id], w)
			}
		}
		if got[first.ID].Note != "card testing, case 17" || got[first.ID].By != "lead" {
			t.Errorf("verdict in force on %s: %+v", first.ID, got[first.ID])
		}
		h, err := st.VerdictHistory(first.ID)
		if err != nil || len(h) != 2 || h[0].Verdict != VerdictNeedsMore || h[1].Verdict != VerdictConfirmed || h[0].Note != "ask the bank" {
			t.Fatalf("history of %s: %+v %v", first.ID, h, err)
		}
		if h, _ := st.VerdictHistory(all[1].ID); len(h) != 0 {
			t.Errorf("history of an alert without verdicts: %+v", h)
		}
	}
	check(st)

	for _, c := range []struct {
		v    Verdict
		want string
	}{
		{Verdict{AlertID: first.ID, AlertSeq: first.Seq, Verdict: "fraud", At: when}, `"fraud"`},
		{Verdict{AlertID: first.ID, AlertSeq: first.Seq, Verdict: VerdictDismissed, Note: strings.Repeat("x", MaxNoteBytes+1), At: when}, "note of"},
		{Verdict{AlertID: first.ID, AlertSeq: first.Seq, Verdict: VerdictDismissed, Note: "\xff", At: when}, "UTF-8"},
		{Verdict{AlertID: first.ID, AlertSeq: first.Seq, Verdict: VerdictDismissed}, "time"},
	} {
		if _, err := st.PutVerdict(c.v); !errors.Is(err, ErrBadVerdict) || !strings.Contains(err.Error(), c.want) {
			t.Errorf("PutVerdict(%+v): %v, want an error about %s", c.v, err, c.want)
		}
	}
	for _, v := range []Verdict{
		{AlertID: "0000000000000000", AlertSeq: first.Seq},
		{AlertID: first.ID, AlertSeq: first.Seq + 10}, // right id, wrong cut
		{AlertID: first.ID, AlertSeq: 70},             // beyond the last complete cut
		{AlertID: "", AlertSeq: first.Seq},
	} {
		v.Verdict, v.At = VerdictDismissed, when
		if _, err := st.PutVerdict(v); !errors.Is(err, ErrNoAlert) {
			t.Errorf("PutVerdict on %s/%d: %v, want ErrNoAlert", v.AlertID, v.AlertSeq, err)
		}
	}
	// FindAlert against the plain list.
	for _, rec := range []AlertRecord{first, second, third} {
		got, err := st.FindAlert(rec.ID)
		if err != nil || got.Seq != rec.Seq || got.Node != rec.Node || string(got.Body) != string(rec.Body) {
			t.Errorf("FindAlert(%s): %+v %v, want %+v", rec.ID, got, err, rec)
		}
	}
	if _, err := st.FindAlert("ffffffffffffffff"); !errors.Is(err, ErrNoAlert) {
		t.Errorf("FindAlert of an unknown id: %v", err)
	}

	// Retention and a full compaction keep them; so do a reopen and a
	// read-only open.
	if err := st.SetDiscardBefore(60); err != nil {
		t.Fatal(err)
	}
	a.commit(70, alertsOfCut(70)...)
	if err := st.Compact(); err != nil {
		t.Fatal(err)
	}
	check(st)
	if err := st.Close(); err != nil {
		t.Fatal(err)
	}
	ro, err := OpenReadOnly(dir)
	if err != nil {
		t.Fatal(err)
	}
	check(ro)
	if _, err := ro.PutVerdict(Verdict{AlertID: first.ID, AlertSeq: first.Seq, Verdict: VerdictDismissed, At: when}); err == nil {
		t.Error("a read-only store took a verdict")
	}
	ro.Close()
	re := openAlertStore(t, dir)
	defer re.st.Close()
	check(re.st)
}

// BenchmarkFindAlert finds an alert by id among 100k stored (100 cuts of
// 1000), the last one in key order: the walk over alert keys a verdict
// given by id costs.
func BenchmarkFindAlert(b *testing.B) {
	st, err := Open(b.TempDir(), Settings{Kind: delta.Undirected, MaxNodes: 4, NumOrbits: 15})
	if err != nil {
		b.Fatal(err)
	}
	defer st.Close()
	var last string
	for seq := uint64(1); seq <= 100; seq++ {
		recs := make([]AlertRecord, 1000)
		for i := range recs {
			id := fmt.Sprintf("%016x", seq*1000+uint64(i))
			recs[i] = AlertRecord{Seq: seq, ID: id, EventTime: alertWatermark(seq), Node: fmt.Sprintf("acct-%d", i), Rule: "ring", Body: []byte(`{}`)}
			last = id
		}
		if err := st.Commit(&Checkpoint{Seq: seq, Watermark: alertWatermark(seq), Alerts: recs}); err != nil {
			b.Fatal(err)
		}
	}
	for b.Loop() {
		if _, err := st.FindAlert(last); err != nil {
			b.Fatal(err)
		}
	}
}
