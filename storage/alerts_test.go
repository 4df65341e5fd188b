package storage

import (
	"fmt"
	"slices"
	"strings"
	"testing"
	"time"

	"orbitwatch/delta"
)

var alertT0 = time.Date(2026, 5, 4, 9, 0, 0, 0, time.UTC)

// alertStore is a store with an empty graph whose checkpoints carry only
// a sequence and a watermark, for the alert records.
type alertStore struct {
	t    *testing.T
	st   *Store
	dict *Dict
}

func openAlertStore(t *testing.T, dir string) *alertStore {
	t.Helper()
	st, err := Open(dir, Settings{Kind: delta.Undirected, MaxNodes: 4, NumOrbits: 15})
	if err != nil {
		t.Fatal(err)
	}
	s, err := st.Load()
	if err != nil {
		t.Fatal(err)
	}
	return &alertStore{t: t, st: st, dict: s.Dict}
}

func (a *alertStore) commit(seq uint64, recs ...AlertRecord) {
	a.t.Helper()
	err := a.st.Commit(&Checkpoint{Seq: seq, Watermark: alertWatermark(seq), Alerts: recs})
	if err != nil {
		a.t.Fatal(err)
	}
}

// alertWatermark is the event-time watermark of the test's cut at seq: one
// minute per ten positions.
func alertWatermark(seq uint64) time.Time { return alertT0.Add(time.Duration(seq) * 6 * time.Second) }

// alertsOfCut makes the alerts of the cut at seq: every third node of five
// under rule "ring" and the others under "fan-out", with a JSON-ish body.
func alertsOfCut(seq uint64) []AlertRecord {
	var out []AlertRecord
	for i := range int(seq%4) + 1 {
		node := fmt.Sprintf("acct-%d", (int(seq)+i)%5)
		rule := "fan-out"
		if (int(seq)+i)%3 == 0 {
			rule = "ring"
		}
		id := fmt.Sprintf("%016x", seq*31+uint64(i))
		out = append(out, AlertRecord{
			Seq: seq, ID: id, EventTime: alertWatermark(seq), Node: node, Rule: rule,
			Body: fmt.Appendf(nil, `{"id":%q,"node":%q}`, id, node),
		})
	}
	return out
}

// want filters all by f the plain way: the reference the store's seeks
// and index walks are held against.
func want(all []AlertRecord, complete uint64, f AlertFilter) []AlertRecord {
	var out []AlertRecord
	for _, r := range all {
		if r.Seq <= complete && r.Seq > f.SinceSeq && !r.EventTime.Before(f.SinceTime) &&
			(f.UntilTime.IsZero() || !r.EventTime.After(f.UntilTime)) &&
			(f.Node == "" || r.Node == f.Node) && (f.Rule == "" || r.Rule == f.Rule) {
			out = append(out, r)
		}
	}
	slices.SortFunc(out, func(x, y AlertRecord) int {
		if x.Seq != y.Seq {
			return int(x.Seq) - int(y.Seq)
		}
		return strings.Compare(x.ID, y.ID)
	})
	if f.Newest {
		slices.Reverse(out)
	}
	if f.Limit > 0 && len(out) > f.Limit {
		out = out[:f.Limit]
	}
	return out
}

func checkAlertFilters(t *testing.T, st *Store, all []AlertRecord) {
	t.Helper()
	complete := st.Seq()
	n := 0
	for _, since := range []uint64{0, 19, 20, 55, 1000} {
		for _, at := range []time.Time{{}, alertWatermark(35), alertWatermark(90), alertWatermark(5000)} {
			for _, until := range []time.Time{{}, alertWatermark(70)} {
				for _, node := range []string{"", "acct-1", "acct-4", "nobody"} {
					for _, rule := range []string{"", "ring", "fan-out"} {
						for _, lim := range []int{0, 1, 3} {
							for _, newest := range []bool{false, true} {
								f := AlertFilter{SinceSeq: since, SinceTime: at, UntilTime: until, Node: node, Rule: rule, Limit: lim, Newest: newest}
								got, err := st.Alerts(f)
								if err != nil {
									t.Fatal(err)
								}
								w := want(all, complete, f)
								if !equalAlerts(got, w) {
									t.Fatalf("Alerts(%+v) at %d:\n got %v\nwant %v", f, complete, got, w)
								}
								n += len(w)
							}
						}
					}
				}
			}
		}
	}
	if n == 0 {
		t.Fatal("no filter selected any alert: the check is empty")
	}
}

func equalAlerts(a, b []AlertRecord) bool {
	return slices.EqualFunc(a, b, func(x, y AlertRecord) bool {
		return x.Seq == y.Seq && x.ID == y.ID && x.EventTime.Equal(y.EventTime) &&
			x.Node == y.Node && x.Rule == y.Rule && string(x.Body) == string(y.Body)
	})
}

// TestAlertsStoredAndListed writes the alerts of each cut with its
// checkpoint, as the worker does, and holds every combination of filters
// against a plain filter over what was written, live, after a reopen,
// read-only, and after retention moved past the early cuts.
func TestAlertsStoredAndListed(t *testing.T) {
	dir := t.TempDir()
	a := openAlertStore(t, dir)
	var all []AlertRecord
	for seq := uint64(10); seq <= 120; seq += 10 {
		recs := alertsOfCut(seq)
		all = append(all, recs...)
		a.commit(seq, recs...)
		got, err := a.st.Alerts(AlertFilter{SinceSeq: seq - 1})
		if err != nil || !equalAlerts(got, want(recs, seq, AlertFilter{})) {
			t.Fatalf("alerts of cut %d after its checkpoint: %v %v", seq, got, err)
		}
	}
	checkAlertFilters(t, a.st, all)

	// A cut whose checkpoint never completes (a crash after its records
	// were written, before the meta record) stays invisible across a
	// reopen, and the recomputed cut writes the same records again.
	torn := alertsOfCut(130)
	cp := &Checkpoint{Seq: 130, Watermark: alertWatermark(130), Alerts: torn}
	if err := a.st.writeUncompleted([]*Checkpoint{cp}, []CheckpointInfo{{Seq: 130, Nodes: a.st.dictLen}}); err != nil {
		t.Fatal(err)
	}
	if err := a.st.Close(); err != nil {
		t.Fatal(err)
	}
	a = openAlertStore(t, dir)
	checkAlertFilters(t, a.st, all)
	a.commit(130, torn...)
	all = append(all, torn...)
	checkAlertFilters(t, a.st, all)

	// Retention drops old vector versions, not alerts.
	if err := a.st.SetDiscardBefore(60); err != nil {
		t.Fatal(err)
	}
	if err := a.st.Compact(); err != nil {
		t.Fatal(err)
	}
	checkAlertFilters(t, a.st, all)
	if err := a.st.Close(); err != nil {
		t.Fatal(err)
	}

	ro, err := OpenReadOnly(dir)
	if err != nil {
		t.Fatal(err)
	}
	defer ro.Close()
	checkAlertFilters(t, ro, all)
	if err := ro.Commit(&Checkpoint{Seq: 200, Watermark: alertWatermark(200), Alerts: alertsOfCut(200)}); err == nil {
		t.Fatal("a commit with alerts on a read-only store succeeded")
	}
}

func TestCommitRefusesBadAlerts(t *testing.T) {
	a := openAlertStore(t, t.TempDir())
	defer a.st.Close()
	a.commit(50)
	good := alertsOfCut(60)[0]
	cases := []struct {
		name string
		seq  uint64
		recs []AlertRecord
		want string
	}{
		{"below the last checkpoint", 40, []AlertRecord{{Seq: 40, ID: "x", EventTime: alertT0}}, "does not exceed the last checkpoint 50"},
		{"record of another cut", 60, []AlertRecord{{Seq: 61, ID: "x", EventTime: alertT0}}, "record 0 has seq 61"},
		{"no id", 60, []AlertRecord{{Seq: 60, EventTime: alertT0}}, `id ""`},
		{"id twice", 60, []AlertRecord{good, good}, "record 1"},
		{"unstorable time", 60, []AlertRecord{{Seq: 60, ID: "x", EventTime: time.Date(1500, 1, 1, 0, 0, 0, 0, time.UTC)}}, "outside the storable range"},
	}
	for _, c := range cases {
		err := a.st.Commit(&Checkpoint{Seq: c.seq, Watermark: alertWatermark(c.seq), Alerts: c.recs})
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: got %v, want an error containing %q", c.name, err, c.want)
		}
	}
	// Nothing of the refused batches was written.
	a.commit(60)
	if got, err := a.st.Alerts(AlertFilter{}); err != nil || len(got) != 0 {
		t.Fatalf("refused records were stored: %v %v", got, err)
	}
}
