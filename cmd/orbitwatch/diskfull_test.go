package main

import (
	"encoding/json"
	"fmt"
	"io"
	"net/http"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"
	"time"

	"orbitwatch/internal/tmpfs"
)

// noDump fails t when out holds a Go crash instead of a message.
func noDump(t *testing.T, what, out string) {
	t.Helper()
	for _, s := range []string{"goroutine ", "SIGBUS", "panic:", "fatal error"} {
		if strings.Contains(out, s) {
			t.Fatalf("%s: the output holds %q:\n%.3000s", what, s, out)
		}
	}
}

// vectorsAt reads a data directory's vectors as of its checkpoint seq.
func vectorsAt(t *testing.T, dir string, seq uint64) map[string][]uint64 {
	t.Helper()
	v, _ := loadVectorsAt(t, dir, seq)
	return v
}

var spaceLine = regexp.MustCompile(`^orbitwatch backfill: data directory (\S+) has [0-9.]+ MiB free, [0-9.]+ MiB needed to commit the cut at seq \d+; nothing was written \(the store stays at the checkpoint at seq (\d+)\): free space on its file system, then try again$`)

// TestBackfillOnAFullDisk runs backfill into a real file system that
// something else has all but filled: it stops with exit code 1 and one
// line naming the directory and the space needed, never a Go crash; the
// store holds a clean run's checkpoint where it stopped; once space is
// freed the same command goes on from there and ends with a clean run's
// vectors and cuts.
func TestBackfillOnAFullDisk(t *testing.T) {
	dir := t.TempDir()
	log := filepath.Join(dir, "log.csv")
	writeLog(t, log, 40000, 61)
	args := func(data string) []string {
		return []string{"backfill", "--data", data, "--input", log, "--checkpoint-every", "500"}
	}
	clean := filepath.Join(dir, "clean")
	if out, code := run(t, args(clean)...); code != 0 {
		t.Fatalf("clean backfill: exit %d\n%s", code, out)
	}
	want, wantState := loadVectors(t, clean)

	fs := filepath.Join(dir, "fs")
	tmpfs.Mount(t, fs, 96<<20)
	data := filepath.Join(fs, "data")

	// A disk with next to nothing free: refused before Badger writes.
	release := tmpfs.Fill(t, fs, 1<<20)
	out, code := run(t, args(data)...)
	noDump(t, "backfill on a full disk", out)
	if want := "orbitwatch backfill: data directory " + data + " has 1.0 MiB free, "; code != exitFailure || !strings.HasPrefix(out, want) || !strings.Contains(out, "needed to open the store for writing") || strings.Count(out, "\n") != 1 {
		t.Fatalf("backfill on a full disk: exit %d, want %d and one line %q…:\n%s", code, exitFailure, want, out)
	}
	release()

	// Room for a part of the log: it stops at a whole checkpoint.
	release = tmpfs.Fill(t, fs, 26<<20)
	out, code = run(t, args(data)...)
	noDump(t, "backfill on a full disk", out)
	lines := strings.Split(strings.TrimSpace(out), "\n")
	m := spaceLine.FindStringSubmatch(lines[len(lines)-1])
	if code != exitFailure || m == nil || m[1] != data {
		t.Fatalf("backfill on a full disk: exit %d, want %d and the last line naming %s and the space needed:\n%s", code, exitFailure, data, out)
	}
	stopped, _ := strconv.ParseUint(m[2], 10, 64)
	if stopped == 0 || stopped >= wantState.cut.Seq {
		t.Fatalf("backfill stopped at checkpoint %d; the test wants it stopped part-way through %d", stopped, wantState.cut.Seq)
	}
	// What is stored is whole: the clean run's checkpoint.
	sameVectors(t, fmt.Sprintf("stored at %d when the disk filled", stopped), vectorsAt(t, data, stopped), vectorsAt(t, clean, stopped))

	release()
	out, code = run(t, args(data)...)
	if code != 0 || !strings.Contains(out, fmt.Sprintf("resumed at checkpoint %d", stopped)) {
		t.Fatalf("rerun after space was freed: exit %d, want 0 resuming at %d:\n%s", code, stopped, out)
	}
	got, gotState := loadVectors(t, data)
	sameVectors(t, "after the disk filled and was freed", got, want)
	if fmt.Sprint(gotState.cps) != fmt.Sprint(wantState.cps) {
		t.Fatalf("cuts %v,\nclean run %v", gotState.cps, wantState.cps)
	}
	t.Logf("stopped at %d of %d: %s", stopped, wantState.cut.Seq, lines[len(lines)-1])
}

// stallStatus is the part of /v1/status a stall shows in.
type stallStatus struct {
	AppliedSeq    uint64 `json:"applied_seq"`
	CommittedSeq  uint64 `json:"committed_seq"`
	Applied       uint64 `json:"applied"`
	Ready         bool   `json:"ready"`
	CommitRetries uint64 `json:"commit_retries"`
	Stalled       string `json:"stalled"`
}

func getStall(t *testing.T, base string) stallStatus {
	t.Helper()
	resp, err := http.Get(base + "/v1/status?local=true")
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	var body struct{ Shards []stallStatus }
	if err := json.NewDecoder(resp.Body).Decode(&body); err != nil || len(body.Shards) != 1 {
		t.Fatalf("status: %v", err)
	}
	return body.Shards[0]
}

func getText(t *testing.T, u string) (int, string) {
	t.Helper()
	resp, err := http.Get(u)
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	b, err := io.ReadAll(resp.Body)
	if err != nil {
		t.Fatal(err)
	}
	return resp.StatusCode, string(b)
}

// metricValue is the value of an unlabelled sample in a /metrics page.
func metricValue(t *testing.T, page, name string) float64 {
	t.Helper()
	m := regexp.MustCompile(`(?m)^` + name + ` (\S+)$`).FindStringSubmatch(page)
	if m == nil {
		t.Fatalf("metric %s missing:\n%s", name, page)
	}
	v, err := strconv.ParseFloat(m[1], 64)
	if err != nil {
		t.Fatal(err)
	}
	return v
}

// TestServeOnAFullDisk fills the file system of a running serve's store:
// publishing goes on, the worker cannot commit, says why in its log, is
// not ready, counts its retries in /metrics and still answers reads; once
// space is freed it goes on by itself, becomes ready, and ends with
// replay's vectors and an uninterrupted applier's cuts in its store.
func TestServeOnAFullDisk(t *testing.T) {
	dir := t.TempDir()
	log := filepath.Join(dir, "log.csv")
	writeLog(t, log, 6000, 71)
	want, applied := replayFinal(t, log)
	e := expect(t, pointers(published(t, log)))

	data := filepath.Join(dir, "data")
	state := filepath.Join(data, storeDir)
	tmpfs.Mount(t, state, 64<<20) // the store on a small file system; NATS's beside it
	srv := startChild(t, "serve", "--data", data, "--nats-listen", "127.0.0.1:0", "--http", "127.0.0.1:0", "--cut-every", workerCuts)
	natsURL, base := srv.waitFor(t, "NATS "), srv.waitFor(t, "HTTP API ")
	waitStatus(t, srv, base, "ready on an empty log", func(s shardStatus) bool { return s.Ready })

	release := tmpfs.Fill(t, state, 0)
	_, _, last := publishCmd(t, "--nats", natsURL, "--nkey", filepath.Join(data, natsKeyFile), "--input", log)
	waitStatus(t, srv, base, "a stall", func(shardStatus) bool { s := getStall(t, base); return s.Stalled != "" && s.CommitRetries >= 2 })
	code, body := getText(t, base+"/readyz")
	if code != http.StatusServiceUnavailable || !strings.Contains(body, "not ready: cuts are not becoming durable") || !strings.Contains(body, "needed to commit the cut at seq") || strings.Contains(body, state) {
		t.Fatalf("readyz while stalled: %d %s", code, body)
	}
	_, page := getText(t, base+"/metrics")
	first := metricValue(t, page, "orbitwatch_commit_retries_total")
	if metricValue(t, page, "orbitwatch_commit_stalled") != 1 || metricValue(t, page, "orbitwatch_ready") != 0 || first < 2 {
		t.Fatalf("metrics while stalled:\n%s", page)
	}
	for rising := time.Now().Add(15 * time.Second); ; time.Sleep(100 * time.Millisecond) {
		_, page = getText(t, base+"/metrics")
		if metricValue(t, page, "orbitwatch_commit_retries_total") > first {
			break
		}
		if time.Now().After(rising) {
			t.Fatalf("retries stay at %v for 15 s (the pauses grow to 5 s)", first)
		}
	}
	if s := getStall(t, base); s.CommittedSeq != 0 || s.AppliedSeq == 0 {
		t.Fatalf("while stalled: %+v, want reads on at the applied events and nothing durable", s)
	}
	for id := range want {
		if _, code := getNode(t, base, id); code != http.StatusOK && code != http.StatusNotFound {
			t.Fatalf("read of %q while stalled: status %d", id, code)
		}
		break
	}
	logged := regexp.MustCompile(`orbitwatch serve: shard 0: commit refused \(try \d+, the next in \S+\): data directory ` + regexp.QuoteMeta(state) + ` has [0-9.]+ MiB free, [0-9.]+ MiB needed to commit the cut at seq \d+`)
	if !logged.MatchString(srv.output()) {
		t.Fatalf("serve did not log the refusal with its reason:\n%s", srv.output())
	}
	noDump(t, "serve on a full disk", srv.output())

	release()
	waitCommitted(t, srv, base, e.cuts[len(e.cuts)-1])
	st := waitApplied(t, srv, base, last)
	if code, body := getText(t, base+"/readyz"); code != http.StatusOK {
		t.Fatalf("readyz after space was freed: %d %s", code, body)
	}
	if s := getStall(t, base); s.Stalled != "" || !s.Ready || st.Applied != applied {
		t.Fatalf("after space was freed: %+v, %d applied, want %d", s, st.Applied, applied)
	}
	sameVectors(t, "API after the disk filled and was freed", readAllNodes(t, base, want), want)
	srv.stop(t)
	checkStored(t, "store after the disk filled and was freed", state, e)
}
