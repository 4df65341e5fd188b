package main

import (
	"encoding/json"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"

	"orbitwatch/storage"
)

// TestOfflineCommandsOnAServeDirectory runs a real serve with
// --keep-history, publishes a log to it, stops it, and points every
// offline command at the directory given to serve (not its state
// folder): export equals count on the same log, query and history read,
// verify passes; the history kept starts within a cut of 30 minutes
// before the last watermark, and a read before it says so in plain
// words.
func TestOfflineCommandsOnAServeDirectory(t *testing.T) {
	dir := t.TempDir()
	log := filepath.Join(dir, "log.csv")
	writeLog(t, log, 6000, 51) // event times one second apart: 100 minutes
	rules := filepath.Join(dir, "rules.yaml")
	// A five-minute look-back keeps the kept span at 30 minutes (KeepFor
	// raises it to two look-backs and a cut spacing at least).
	if err := os.WriteFile(rules, []byte("lookback: 5m\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	e := expect(t, pointers(published(t, log)))
	data := filepath.Join(dir, "data")
	srv := startChild(t, "serve", "--data", data, "--nats-listen", "127.0.0.1:0", "--http", "127.0.0.1:0",
		"--cut-every", workerCuts, "--keep-history", "30m", "--alerts", rules)
	natsURL, base := srv.waitFor(t, "NATS "), srv.waitFor(t, "HTTP API ")
	publishCmd(t, "--nats", natsURL, "--nkey", filepath.Join(data, natsKeyFile), "--input", log)
	waitCommitted(t, srv, base, e.cuts[len(e.cuts)-1])
	srv.stop(t)

	// The store holds the last cut (the events after it are read again
	// by the next start): expect's applier over the published log holds
	// every vector there.
	lastCut := e.cuts[len(e.cuts)-1]
	matrix := filepath.Join(dir, "matrix.csv")
	mustRunCmd(t, "export", "--data", data, "--format", "csv", "--out", matrix)
	_, got := readMatrix(t, matrix)
	sameVectors(t, "export of the serve directory", got, e.atLast)
	mustRunCmd(t, "verify", "--data", data)
	var nv NodeVector
	if err := json.Unmarshal([]byte(mustRunCmd(t, "query", "--data", data, "--node", "hub-0", "--json").stdout), &nv); err != nil {
		t.Fatal(err)
	}
	if nv.Seq != lastCut || nv.Orbits[0] == 0 {
		t.Errorf("query on the serve directory: seq %d, degree %d; want the last cut %d and a degree", nv.Seq, nv.Orbits[0], lastCut)
	}
	if h := mustRunCmd(t, "history", "--data", data, "--node", "hub-0", "--csv"); strings.Count(h.stdout, "\n") < 2 {
		t.Errorf("history on the serve directory: %q", h.stdout)
	}

	st, err := storage.OpenReadOnly(filepath.Join(data, storeDir))
	if err != nil {
		t.Fatal(err)
	}
	cps, floor := st.Checkpoints(), st.Floor()
	st.Close()
	last := cps[len(cps)-1].Watermark
	first := cps[0]
	if floor == 0 || first.Seq != floor || first.Watermark.After(last.Add(-30*time.Minute)) || first.Watermark.Before(last.Add(-31*time.Minute)) {
		t.Fatalf("kept history starts at seq %d (floor %d) with event time %v; the last cut's is %v: want 30 minutes back, to a cut",
			first.Seq, floor, first.Watermark, last)
	}
	r := runCmd(t, "query", "--data", data, "--node", "hub-0", "--seq", strconv.FormatUint(floor-1, 10))
	if r.code != exitFailure || !strings.Contains(r.stderr, "before the retained history") || strings.Contains(r.stderr, "18446744073709551615") {
		t.Errorf("read before the kept history: exit %d, %q", r.code, r.stderr)
	}
}

// TestTimesInEveryForm backfills a log whose times come in every form
// event logs use (a date alone, a database export's date and time, RFC
// 3339 with a zone, Unix seconds and milliseconds) and whose ops are in
// any letter case, then reads as of each checkpoint with --at in those
// forms too.
func TestTimesInEveryForm(t *testing.T) {
	dir := t.TempDir()
	log := filepath.Join(dir, "log.csv")
	// Event times: 00:00, 09:17, 08:00 (an earlier time: the watermark
	// stays at 09:17), 11:00, 12:00 on 2026-03-01, UTC.
	text := "ts,op,src,dst\n" +
		"2026-03-01,ADD,a,b\n" +
		"2026-03-01 09:17:00,Add,b,c\n" +
		"2026-03-01T10:00:00+02:00,add,c,d\n" +
		"1772362800,add,d,e\n" +
		"1772366400000,REMOVE,a,b\n"
	if err := os.WriteFile(log, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	data := filepath.Join(dir, "data")
	r := mustRunCmd(t, "backfill", "--data", data, "--input", log, "--checkpoint-every", "1", "--no-alerts")
	if !strings.Contains(r.stderr, "5 applied, 0 rejected") {
		t.Fatalf("backfill: %s", r.stderr)
	}
	for _, c := range []struct {
		at  string
		seq uint64
	}{
		{"2026-03-01", 1},
		{"2026-03-01 09:16:59", 1},
		{"2026-03-01 09:17:00", 3},
		{"2026-03-01 11:17:00+02:00", 3},
		{"2026-03-01T10:59:59Z", 3},
		{"1772362800", 4},
		{"1772366399999", 4},
		{"1772366400000", 5},
		{"2026-03-02", 5},
	} {
		var nv NodeVector
		out := mustRunCmd(t, "query", "--data", data, "--node", "a", "--at", c.at, "--json").stdout
		if err := json.Unmarshal([]byte(out), &nv); err != nil {
			t.Fatal(err)
		}
		if nv.Seq != c.seq {
			t.Errorf("--at %q reads checkpoint %d, want %d", c.at, nv.Seq, c.seq)
		}
	}
	if r := runCmd(t, "history", "--data", data, "--node", "c", "--from", "2026-03-01 09:00", "--to", "1772366400", "--csv"); r.code != 0 || !strings.HasPrefix(r.stdout, "seq,event_time") {
		t.Errorf("history with database-style and Unix times: exit %d, %q %q", r.code, r.stdout, r.stderr)
	}
}

// TestReplayOutDirectory: replay refuses an --out that holds anything
// and leaves it as it was; --replace removes an earlier replay's files
// (and only those: a directory with other files is still refused), so
// the directory ends with this run's checkpoints alone; --verify says
// that verification passed.
func TestReplayOutDirectory(t *testing.T) {
	dir := t.TempDir()
	log := filepath.Join(dir, "log.csv")
	writeLog(t, log, 300, 52)
	out := filepath.Join(dir, "out")
	mustRunCmd(t, "replay", "--input", log, "--out", out, "--checkpoint-every", "10")
	list := func(d string) []string {
		ents, err := os.ReadDir(d)
		if err != nil {
			t.Fatal(err)
		}
		var names []string
		for _, e := range ents {
			names = append(names, e.Name())
		}
		return names
	}
	before := list(out)
	if len(before) != 30 {
		t.Fatalf("first replay wrote %d files, want 30", len(before))
	}
	r := runCmd(t, "replay", "--input", log, "--out", out, "--checkpoint-every", "100")
	if r.code != exitUsage || !strings.Contains(r.stderr, "--replace") || strings.Join(list(out), ",") != strings.Join(before, ",") {
		t.Fatalf("replay into a used --out: exit %d, %q; files now %v", r.code, r.stderr, list(out))
	}
	r = mustRunCmd(t, "replay", "--input", log, "--out", out, "--checkpoint-every", "100", "--replace", "--verify")
	if got := strings.Join(list(out), ","); got != "100.csv,200.csv,300.csv" {
		t.Errorf("after --replace the directory holds %s", got)
	}
	if !strings.Contains(r.stdout, "verification passed: at each of 3 checkpoints (the last at seq 300)") {
		t.Errorf("replay --verify does not say that verification passed: %q", r.stdout)
	}
	if err := os.WriteFile(filepath.Join(out, "notes.txt"), []byte("mine\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	r = runCmd(t, "replay", "--input", log, "--out", out, "--replace")
	if r.code != exitUsage || !strings.Contains(r.stderr, "notes.txt") || len(list(out)) != 4 {
		t.Errorf("--replace over a foreign file: exit %d, %q, %d files", r.code, r.stderr, len(list(out)))
	}
}

// TestBackfillResumeSummary: a backfill that goes on from a checkpoint
// prints one summary line, which says where it resumed.
func TestBackfillResumeSummary(t *testing.T) {
	dir := t.TempDir()
	a, b := filepath.Join(dir, "a.csv"), filepath.Join(dir, "b.csv")
	writeLog(t, a, 400, 53)
	writeLog(t, b, 200, 54)
	data := filepath.Join(dir, "data")
	r := mustRunCmd(t, "backfill", "--data", data, "--input", a, "--no-alerts")
	if strings.Contains(r.stderr, "resumed") {
		t.Errorf("a first run says it resumed: %q", r.stderr)
	}
	st, err := storage.OpenReadOnly(data)
	if err != nil {
		t.Fatal(err)
	}
	seq := st.Seq()
	st.Close()
	r = mustRunCmd(t, "backfill", "--data", data, "--input", a, "--input", b, "--no-alerts")
	if n := strings.Count(r.stderr, "orbitwatch backfill:"); n != 1 {
		t.Errorf("%d summary lines, want one:\n%s", n, r.stderr)
	}
	if !strings.Contains(r.stderr, "resumed at checkpoint "+strconv.FormatUint(seq, 10)+";") {
		t.Errorf("the summary does not say it resumed at checkpoint %d:\n%s", seq, r.stderr)
	}
}
