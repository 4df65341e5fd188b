package storage

import (
	"testing"

	"orbitwatch/delta"
)

// TestTornAlerts: alerts of a cut whose commit never completed (the
// process died between its records and its meta record) stay invisible
// after a reopen, also once later checkpoints at other seqs pass that cut.
func TestTornAlerts(t *testing.T) {
	dir := t.TempDir()
	st := mustOpen(t, dir, undirected4)
	m := newModel(delta.Undirected, 15, 4, 100)
	m.run(100)
	if err := st.Commit(m.checkpoint()); err != nil {
		t.Fatal(err)
	}
	lost := AlertRecord{Seq: 300, ID: "cut300-1", EventTime: m.watermark(), Node: m.dict.Name(0), Rule: "fan-out"}
	torn := &Checkpoint{Seq: 300, Watermark: m.watermark(), Alerts: []AlertRecord{lost}}
	if err := st.writeUncompleted([]*Checkpoint{torn}, []CheckpointInfo{{Seq: 300, Nodes: st.dictLen}}); err != nil {
		t.Fatal(err)
	}
	if err := st.Close(); err != nil { // the cut at 300 never commits
		t.Fatal(err)
	}
	st = mustOpen(t, dir, undirected4)
	defer st.Close()
	m.run(200)
	kept := AlertRecord{Seq: 200, ID: "cut200-1", EventTime: m.watermark(), Node: m.dict.Name(1), Rule: "ring"}
	cp := m.checkpoint()
	cp.Alerts = []AlertRecord{kept}
	if err := st.Commit(cp); err != nil {
		t.Fatal(err)
	}
	m.run(400)
	if err := st.Commit(m.checkpoint()); err != nil {
		t.Fatal(err)
	}
	got, err := st.Alerts(AlertFilter{})
	if err != nil {
		t.Fatal(err)
	}
	if len(got) != 1 || got[0].ID != kept.ID {
		t.Fatalf("alerts after passing the lost cut: %+v, want only %s", got, kept.ID)
	}
	s, err := st.Load()
	if err != nil {
		t.Fatal(err)
	}
	checkState(t, st, s, m)
}

// writeUncompleted writes the records of cps as Commit does, without the
// meta record that completes them: what a crash between the two leaves.
func (st *Store) writeUncompleted(cps []*Checkpoint, infos []CheckpointInfo) error {
	w, err := st.prepareRecords(cps, infos)
	if err != nil {
		return err
	}
	return st.writeRecords(w)
}
