package main

import (
	"bufio"
	"bytes"
	"errors"
	"fmt"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

	"orbitwatch/delta"
	"orbitwatch/shard"
	"orbitwatch/storage"
)

// writeLog writes a seeded edge log of n data lines: skewed adds (a few busy
// nodes), removes of edges added earlier, repeated pairs, and every 500th
// line malformed or a self-loop, with event times one second apart.
func writeLog(t testing.TB, path string, n int, seed uint64) {
	t.Helper()
	r := rand.New(rand.NewPCG(seed, 11))
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	w := bufio.NewWriter(f)
	fmt.Fprintln(w, "ts,op,src,dst")
	pick := func() string {
		if r.IntN(8) == 0 {
			return fmt.Sprintf("hub-%d", r.IntN(5))
		}
		return fmt.Sprintf("acct-%04d", r.IntN(2500))
	}
	var live [][2]string
	ts := time.Date(2026, 1, 1, 0, 0, 0, 0, time.UTC)
	for i := 1; i <= n; i++ {
		ts = ts.Add(time.Second)
		stamp := ts.Format(time.RFC3339)
		switch {
		case i%1000 == 0:
			fmt.Fprintf(w, "%s,transfer,%s,%s\n", stamp, pick(), pick()) // bad op
		case i%1000 == 500:
			a := pick()
			fmt.Fprintf(w, "%s,add,%s,%s\n", stamp, a, a) // self-loop
		case len(live) > 0 && r.IntN(4) == 0:
			k := r.IntN(len(live))
			e := live[k]
			live[k] = live[len(live)-1]
			live = live[:len(live)-1]
			fmt.Fprintf(w, "%s,remove,%s,%s\n", stamp, e[0], e[1])
		default:
			e := [2]string{pick(), pick()}
			live = append(live, e)
			fmt.Fprintf(w, "%s,add,%s,%s\n", stamp, e[0], e[1])
		}
	}
	if err := w.Flush(); err != nil {
		t.Fatal(err)
	}
	if err := f.Close(); err != nil {
		t.Fatal(err)
	}
}

// stored is a data directory's latest checkpoint: its state, restored
// from the stored records (shard.StateAt holds them to the stored
// adjacency), every node's vector by name, and the list of checkpoints.
type stored struct {
	a       *shard.Applier
	cut     storage.CheckpointInfo
	vectors map[string][]uint64
	cps     []storage.CheckpointInfo
}

// loadVectors reads a data directory's latest checkpoint as node → vector.
func loadVectors(t testing.TB, dir string) (map[string][]uint64, stored) {
	return loadVectorsAt(t, dir, 0)
}

// loadVectorsAt reads a data directory's checkpoint at seq (0: the
// latest) as node → vector.
func loadVectorsAt(t testing.TB, dir string, seq uint64) (map[string][]uint64, stored) {
	t.Helper()
	st, err := storage.OpenReadOnly(dir)
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	set := st.Settings()
	c, err := shard.NewCounting(set.Kind, set.MaxNodes)
	if err != nil {
		t.Fatal(err)
	}
	if seq == 0 {
		seq = st.Seq()
	}
	a, cut, err := shard.StateAt(st, c, seq)
	if err != nil {
		t.Fatal(err)
	}
	if cut.Seq != seq {
		t.Fatalf("%s has no checkpoint at %d (the latest before it: %d)", dir, seq, cut.Seq)
	}
	vec, err := a.Vectors()
	if err != nil {
		t.Fatal(err)
	}
	out := map[string][]uint64{}
	for x, name := range a.Names() {
		out[name] = append([]uint64(nil), vec.Row(uint32(x))...)
	}
	return out, stored{a: a, cut: cut, vectors: out, cps: st.Checkpoints()}
}

func sameVectors(t testing.TB, what string, got, want map[string][]uint64) {
	t.Helper()
	if len(got) != len(want) {
		t.Fatalf("%s: %d nodes, want %d", what, len(got), len(want))
	}
	for n, w := range want {
		g, ok := got[n]
		if !ok {
			t.Fatalf("%s: node %q missing", what, n)
		}
		for o := range w {
			if g[o] != w[o] {
				t.Fatalf("%s: node %q orbit %d = %d, want %d", what, n, o, g[o], w[o])
			}
		}
	}
}

func run(t testing.TB, args ...string) (string, int) {
	t.Helper()
	cmd := exec.Command(binaryPath(t), args...)
	var out bytes.Buffer
	cmd.Stdout, cmd.Stderr = &out, &out
	err := cmd.Run()
	code := 0
	if ee, ok := err.(*exec.ExitError); ok {
		code = ee.ExitCode()
	} else if err != nil {
		t.Fatal(err)
	}
	return out.String(), code
}

// TestBackfillSurvivesSIGKILL kills a real backfill process at random
// moments, reruns it each time with the same arguments, and demands the
// final state of an uninterrupted run and of a static recount.
func TestBackfillSurvivesSIGKILL(t *testing.T) {
	dir := t.TempDir()
	log := filepath.Join(dir, "log.csv")
	events := 50000
	kills := 20
	writeLog(t, log, events, 1)
	args := func(data string) []string {
		return []string{"backfill", "--data", data, "--input", log, "--checkpoint-every", "1500"}
	}

	clean := filepath.Join(dir, "clean")
	if out, code := run(t, args(clean)...); code != 0 {
		t.Fatalf("uninterrupted backfill: exit %d\n%s", code, out)
	}
	want, wantState := loadVectors(t, clean)

	crashed := filepath.Join(dir, "crashed")
	r := rand.New(rand.NewPCG(5, 5))
	killed := 0
	for attempt := 0; killed < kills && attempt < 3*kills; attempt++ {
		cmd := exec.Command(binaryPath(t), args(crashed)...)
		if err := cmd.Start(); err != nil {
			t.Fatal(err)
		}
		done := make(chan error, 1)
		go func() { done <- cmd.Wait() }()
		select {
		case <-done:
			// Finished before the kill: start over in a new directory so
			// that later kills still land mid-run.
			if err := os.RemoveAll(crashed); err != nil {
				t.Fatal(err)
			}
		case <-time.After(time.Duration(30+r.IntN(900)) * time.Millisecond):
			if err := cmd.Process.Signal(syscall.SIGKILL); err != nil {
				t.Fatal(err)
			}
			<-done
			killed++
		}
	}
	if killed < kills {
		t.Fatalf("only %d kills landed mid-run", killed)
	}
	out, code := run(t, args(crashed)...)
	if code != 0 {
		t.Fatalf("final rerun: exit %d\n%s", code, out)
	}
	got, gotState := loadVectors(t, crashed)
	sameVectors(t, "after crashes vs uninterrupted", got, want)
	if gotState.cut.Seq != uint64(events) || wantState.cut.Seq != uint64(events) {
		t.Fatalf("seq %d / %d, want %d", gotState.cut.Seq, wantState.cut.Seq, events)
	}
	if gotState.a.Graph().NumEdges() != wantState.a.Graph().NumEdges() {
		t.Fatalf("edges %d, want %d", gotState.a.Graph().NumEdges(), wantState.a.Graph().NumEdges())
	}
	// Cuts are a function of the log: the killed and resumed runs stored
	// the same cuts as the uninterrupted one.
	if fmt.Sprint(gotState.cps) != fmt.Sprint(wantState.cps) {
		t.Fatalf("cuts after crashes %v,\nuninterrupted %v", gotState.cps, wantState.cps)
	}

	// The static recount of the stored graph is the independent reference.
	c, err := shard.NewCounting(delta.Undirected, 4)
	if err != nil {
		t.Fatal(err)
	}
	rec := c.Recount.Recount(gotState.a.Graph())
	vec, err := gotState.a.Vectors()
	if err != nil {
		t.Fatal(err)
	}
	if node, orbit, a, b, ok := vec.FirstDiff(rec); !ok {
		t.Fatalf("stored vs recount: node %q orbit %d: %d vs %d", gotState.a.Names()[node], orbit, a, b)
	}

	// A rerun of a finished backfill applies nothing; so does a renamed copy.
	out, code = run(t, args(crashed)...)
	if code != 0 || !strings.Contains(out, " 0 applied") {
		t.Fatalf("rerun of a finished backfill: exit %d\n%s", code, out)
	}
	renamed := filepath.Join(dir, "renamed.csv")
	data, _ := os.ReadFile(log)
	os.WriteFile(renamed, data, 0o644)
	out, code = run(t, "backfill", "--data", crashed, "--input", renamed, "--checkpoint-every", "1500")
	if code != 0 || !strings.Contains(out, " 0 applied") {
		t.Fatalf("renamed copy not recognised: exit %d\n%s", code, out)
	}
	after, _ := loadVectors(t, crashed)
	sameVectors(t, "after reruns", after, want)
}

func TestBackfillRefusesBadDirectoriesAndInputs(t *testing.T) {
	dir := t.TempDir()
	log := filepath.Join(dir, "log.csv")
	writeLog(t, log, 3000, 2)
	data := filepath.Join(dir, "data")
	if out, code := run(t, "backfill", "--data", data, "--input", log, "--checkpoint-every", "1000"); code != 0 {
		t.Fatalf("backfill: %d\n%s", code, out)
	}
	before, _ := loadVectors(t, data)

	notLog := filepath.Join(dir, "notes.csv")
	os.WriteFile(notLog, []byte("name,amount\nx,1\n"), 0o644)
	other := filepath.Join(dir, "other.csv")
	writeLog(t, other, 500, 3)

	cases := []struct {
		name string
		args []string
		want string
	}{
		{"other max-nodes", []string{"--max-nodes", "3", "--input", log}, "MaxNodes"},
		{"other kind", []string{"--kind", "directed", "--input", log}, "Kind"},
		{"other window", []string{"--window", "30d", "--input", log}, "Window"},
		{"not an edge log", []string{"--input", log, "--input", notLog}, "notes.csv"},
		{"different content at a position", []string{"--input", other}, "is not the content"},
	}
	for _, c := range cases {
		out, code := run(t, append([]string{"backfill", "--data", data}, c.args...)...)
		if code == 0 || !strings.Contains(out, c.want) {
			t.Errorf("%s: exit %d, output lacks %q:\n%s", c.name, code, c.want, out)
		}
		after, _ := loadVectors(t, data)
		sameVectors(t, c.name+" changed state", after, before)
	}

	// A directory that is not ours, and a Badger directory with its
	// manifest gone.
	foreign := filepath.Join(dir, "foreign")
	os.MkdirAll(foreign, 0o755)
	os.WriteFile(filepath.Join(foreign, "README"), []byte("x"), 0o644)
	if out, code := run(t, "backfill", "--data", foreign, "--input", log); code == 0 {
		t.Errorf("foreign directory accepted:\n%s", out)
	}
	if err := os.Remove(filepath.Join(data, "MANIFEST")); err != nil {
		t.Fatal(err)
	}
	if out, code := run(t, "backfill", "--data", data, "--input", log); code == 0 || strings.Contains(out, "panic") {
		t.Errorf("truncated Badger directory: exit %d\n%s", code, out)
	}
}

// TestBackfillWindowRejectsLate runs a window through the command: a late
// add is rejected with that reason, and events without ts are refused.
func TestBackfillWindowRejectsLate(t *testing.T) {
	dir := t.TempDir()
	log := filepath.Join(dir, "w.csv")
	os.WriteFile(log, []byte("ts,op,src,dst\n"+
		"2026-01-01T00:00:00Z,add,a,b\n"+
		"2026-01-10T00:00:00Z,add,b,c\n"+
		"2026-01-02T00:00:00Z,add,c,d\n"+ // 8 days old on arrival: late for a 7d window
		",add,d,e\n"+
		"2026-01-11T00:00:00Z,add,a,c\n"), 0o644)
	rejects := filepath.Join(dir, "rejects.csv")
	out, code := run(t, "backfill", "--data", filepath.Join(dir, "d"), "--input", log, "--window", "7d", "--rejects", rejects)
	if code != 0 {
		t.Fatalf("exit %d\n%s", code, out)
	}
	rj, _ := os.ReadFile(rejects)
	if !strings.Contains(string(rj), "4,late") || !strings.Contains(string(rj), "5,missing ts") {
		t.Fatalf("rejects file:\n%s", rj)
	}
	got, _ := loadVectors(t, filepath.Join(dir, "d"))
	// a-b expired (watermark Jan 11 ≥ Jan 1 + 7d); left: b-c, a-c → path b-c-a... c is the middle.
	if got["c"][2] != 1 || got["a"][0] != 1 || got["b"][0] != 1 {
		t.Fatalf("window state: a %v b %v c %v", got["a"], got["b"], got["c"])
	}
}

// TestBackfillKeepHistory: with --keep-history the retention floor follows
// the watermark, so checkpoints older than the kept span can no longer be
// read, while those inside it read exactly as without retention; with
// alert rules the kept span is never shorter than their look-back.
func TestBackfillKeepHistory(t *testing.T) {
	dir := t.TempDir()
	log := filepath.Join(dir, "log.csv")
	writeLog(t, log, 6000, 4) // event times one second apart: 6000 s in all
	kept := filepath.Join(dir, "kept")
	all := filepath.Join(dir, "all")
	alerted := filepath.Join(dir, "alerted")
	rules := filepath.Join(dir, "rules.yaml")
	if err := os.WriteFile(rules, []byte("lookback: 20m\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	for _, d := range []string{kept, all, alerted} {
		args := []string{"backfill", "--data", d, "--input", log, "--checkpoint-every", "500", "--no-alerts"}
		switch d {
		case kept:
			args = append(args, "--keep-history", "30m")
		case alerted:
			args = append(args[:len(args)-1], "--keep-history", "10m", "--alerts", rules, "--cut-every", "10m")
		}
		if out, code := run(t, args...); code != 0 {
			t.Fatalf("backfill: exit %d\n%s", code, out)
		}
	}
	open := func(d string) *storage.Store {
		st, err := storage.OpenReadOnly(d)
		if err != nil {
			t.Fatal(err)
		}
		return st
	}
	sk, sa, sl := open(kept), open(all), open(alerted)
	defer sk.Close()
	defer sa.Close()
	defer sl.Close()
	// Rules that look back 20 minutes, with cuts every 10 minutes, keep
	// two look-backs and a cut spacing (50 minutes), more than the 10
	// minutes asked for: 6000 s − 3000 s = 3000 s, whose checkpoint is at
	// seq 3000.
	if sl.Floor() != 3000 {
		t.Fatalf("retention floor with alert rules %d, want 3000 (two look-backs and a cut spacing kept)", sl.Floor())
	}
	// The last watermark is 6000 s in; 30 minutes back is 4200 s, so the
	// floor is the checkpoint at seq 4000 (its watermark 4000 s ≤ 4200 s).
	if sk.Floor() != 4000 || sa.Floor() != 0 {
		t.Fatalf("retention floor %d (kept) / %d (all), want 4000 / 0", sk.Floor(), sa.Floor())
	}
	c, err := shard.NewCounting(delta.Undirected, 4)
	if err != nil {
		t.Fatal(err)
	}
	if _, _, err := shard.DeriveStored(sk, c.New(), "hub-0", 3500); !errors.Is(err, storage.ErrRetention) {
		t.Fatalf("read below the floor: %v, want ErrRetention", err)
	}
	for _, seq := range []uint64{4000, 5000, 6000} {
		a, _, err1 := shard.DeriveStored(sk, c.New(), "hub-0", seq)
		b, _, err2 := shard.DeriveStored(sa, c.New(), "hub-0", seq)
		if err1 != nil || err2 != nil {
			t.Fatalf("seq %d: %v / %v", seq, err1, err2)
		}
		for o := range b {
			if a[o] != b[o] {
				t.Fatalf("seq %d orbit %d: %d with retention, %d without", seq, o, a[o], b[o])
			}
		}
	}
}

// TestBackfillInterrupted stops a real backfill with SIGINT part-way: it
// exits 130 with one line saying how to go on, the directory it leaves
// passes verify, and a rerun with the same arguments resumes and ends in
// an uninterrupted run's cut.
func TestBackfillInterrupted(t *testing.T) {
	dir := t.TempDir()
	log := filepath.Join(dir, "log.csv")
	events := 200000 // some seconds of work, so that the signal lands part-way
	writeLog(t, log, events, 3)
	data := filepath.Join(dir, "data")
	args := []string{"backfill", "--data", data, "--input", log, "--checkpoint-every", "20000"}
	cmd := exec.Command(binaryPath(t), args...)
	var out bytes.Buffer
	cmd.Stdout, cmd.Stderr = &out, &out
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	time.Sleep(time.Second)
	if err := cmd.Process.Signal(os.Interrupt); err != nil {
		t.Fatal(err)
	}
	err := cmd.Wait()
	var ee *exec.ExitError
	if err == nil {
		t.Skipf("the backfill finished within a second, before the signal:\n%s", out.String())
	}
	if !errors.As(err, &ee) || ee.ExitCode() != exitInterrupted {
		t.Fatalf("interrupted backfill: %v, want exit %d\n%s", err, exitInterrupted, out.String())
	}
	if !strings.Contains(out.String(), "interrupted; rerun with the same arguments to go on") || strings.Contains(out.String(), "goroutine ") {
		t.Fatalf("interrupted backfill said:\n%s", out.String())
	}
	if got, code := run(t, "verify", "--data", data); code != 0 || !strings.Contains(got, "equals the static recount") {
		t.Fatalf("verify after the interrupt: exit %d\n%s", code, got)
	}
	got, code := run(t, args...)
	if code != 0 || !strings.Contains(got, "resumed at checkpoint") {
		t.Fatalf("rerun after the interrupt: exit %d\n%s", code, got)
	}
	_, st := loadVectors(t, data)
	if st.cut.Seq != uint64(events) {
		t.Fatalf("after the rerun the store is at %d, want %d", st.cut.Seq, events)
	}
}
