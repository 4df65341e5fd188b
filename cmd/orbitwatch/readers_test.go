package main

import (
	"encoding/json"
	"fmt"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"orbitwatch/internal/tmpfs"
)

var exportedAt = regexp.MustCompile(`at checkpoint (\d+)`)

// notYet reports whether a reader's output says only that the writer has
// not yet made the directory, its store or its first checkpoint.
var notYetRE = regexp.MustCompile(`(?m)^orbitwatch \w+: (data directory \S+: no such file or directory|open \S+ read-only: (not an orbitwatch store \(no Badger manifest\)|a writer is creating the store; it holds no checkpoint yet)|data directory \S+ holds no complete checkpoint)$`)

func notYet(out string) bool { return notYetRE.MatchString(out) }

// readAll runs query, export, history and verify on data and holds each
// answer to ref, the vectors of a reference run as of a checkpoint. It
// returns which commands answered.
func readAll(t *testing.T, data, node string, ref func(seq uint64) map[string][]uint64) []string {
	t.Helper()
	var ok []string
	out, code := run(t, "query", "--data", data, "--node", node, "--json")
	if code == 0 {
		var q NodeVector
		if err := json.Unmarshal([]byte(out[strings.Index(out, "{"):]), &q); err != nil {
			t.Fatalf("query: %v\n%s", err, out)
		}
		sameVectors(t, fmt.Sprintf("query at %d", q.Seq), map[string][]uint64{node: q.Orbits}, map[string][]uint64{node: ref(q.Seq)[node]})
		ok = append(ok, "query")
	} else if !notYet(out) {
		t.Fatalf("query beside a writer: exit %d\n%s", code, out)
	}
	csv := filepath.Join(t.TempDir(), "m.csv")
	out, code = run(t, "export", "--data", data, "--format", "csv", "--out", csv)
	if code == 0 {
		m := exportedAt.FindStringSubmatch(out)
		if m == nil {
			t.Fatalf("export names no checkpoint:\n%s", out)
		}
		seq, _ := strconv.ParseUint(m[1], 10, 64)
		_, rows := readMatrix(t, csv)
		sameVectors(t, fmt.Sprintf("export at %d", seq), rows, ref(seq))
		ok = append(ok, "export")
	} else if !notYet(out) {
		t.Fatalf("export beside a writer: exit %d\n%s", code, out)
	}
	out, code = run(t, "history", "--data", data, "--node", node, "--csv")
	if code == 0 {
		lines := strings.Split(strings.TrimSpace(out), "\n")
		last := strings.Split(lines[len(lines)-1], ",")
		seq, err := strconv.ParseUint(last[0], 10, 64)
		if err != nil {
			t.Fatalf("history's last row %q", lines[len(lines)-1])
		}
		row := make([]uint64, len(last)-2)
		for i, f := range last[2:] {
			row[i], _ = strconv.ParseUint(f, 10, 64)
		}
		sameVectors(t, fmt.Sprintf("history at %d", seq), map[string][]uint64{node: row}, map[string][]uint64{node: ref(seq)[node]})
		ok = append(ok, "history")
	} else if !notYet(out) && !strings.Contains(out, "is not in") {
		t.Fatalf("history beside a writer: exit %d\n%s", code, out)
	}
	out, code = run(t, "verify", "--data", data)
	if code == 0 && strings.Contains(out, "equals the static recount") {
		ok = append(ok, "verify")
	} else if !notYet(out) {
		t.Fatalf("verify beside a writer: exit %d\n%s", code, out)
	}
	return ok
}

// TestReadersWhileBackfillRuns runs query, export, history and verify
// again and again on a data directory while backfill writes it: each
// answers (no "in use"), with exactly what a clean run stored at the
// checkpoint it names.
func TestReadersWhileBackfillRuns(t *testing.T) {
	dir := t.TempDir()
	log := filepath.Join(dir, "log.csv")
	writeLog(t, log, 80000, 81)
	args := func(data string) []string {
		return []string{"backfill", "--data", data, "--input", log, "--checkpoint-every", "1000"}
	}
	clean := filepath.Join(dir, "clean")
	if out, code := run(t, args(clean)...); code != 0 {
		t.Fatalf("clean backfill: exit %d\n%s", code, out)
	}
	refs := map[uint64]map[string][]uint64{}
	ref := func(seq uint64) map[string][]uint64 {
		if refs[seq] == nil {
			refs[seq] = vectorsAt(t, clean, seq)
		}
		return refs[seq]
	}
	commands := []string{"query", "export", "history", "verify"}
	during := map[string]int{}
	all := func() bool {
		for _, c := range commands {
			if during[c] == 0 {
				return false
			}
		}
		return true
	}
	// A backfill that ends before every command has answered beside it
	// runs again in a new directory (a fast machine), at most three times.
	for attempt := 0; attempt < 3 && !all(); attempt++ {
		data := filepath.Join(dir, fmt.Sprint("data-", attempt))
		bf := startChild(t, args(data)...)
		for running := true; running; {
			ok := readAll(t, data, "hub-1", ref)
			select {
			case <-bf.done:
				running = false
			default:
				for _, c := range ok {
					during[c]++
				}
			}
		}
		if bf.err != nil {
			t.Fatalf("backfill beside the readers: %v\n%s", bf.err, bf.output())
		}
	}
	t.Logf("answers while backfill ran: %v", during)
	if !all() {
		t.Fatalf("not every reading command answered while backfill ran (answers: %v)", during)
	}
}

// TestReadersWhileServeRuns: the offline commands read a running serve's
// data directory, at its last durable cut.
func TestReadersWhileServeRuns(t *testing.T) {
	dir := t.TempDir()
	log := filepath.Join(dir, "log.csv")
	writeLog(t, log, 4000, 83)
	e := expect(t, pointers(published(t, log)))
	data := filepath.Join(dir, "data")
	srv := startChild(t, "serve", "--data", data, "--nats-listen", "127.0.0.1:0", "--http", "127.0.0.1:0", "--cut-every", workerCuts)
	natsURL, base := srv.waitFor(t, "NATS "), srv.waitFor(t, "HTTP API ")
	publishCmd(t, "--nats", natsURL, "--nkey", filepath.Join(data, natsKeyFile), "--input", log)
	lastCut := e.cuts[len(e.cuts)-1]
	waitCommitted(t, srv, base, lastCut)
	ref := func(seq uint64) map[string][]uint64 {
		if seq != lastCut {
			t.Fatalf("a reader read the cut at %d, the last durable one is %d", seq, lastCut)
		}
		return e.atLast
	}
	if ok := readAll(t, data, "hub-1", ref); len(ok) != 4 {
		t.Fatalf("only %v answered while serve ran:\n%s", ok, srv.output())
	}
	srv.stop(t)
}

// TestReadOnlyDataDirectory: backfill on a data directory on a read-only
// file system says it is read-only, not damaged; the reading commands read
// it.
func TestReadOnlyDataDirectory(t *testing.T) {
	dir := t.TempDir()
	log := filepath.Join(dir, "log.csv")
	writeLog(t, log, 3000, 85)
	fs := filepath.Join(dir, "fs")
	tmpfs.Mount(t, fs, 96<<20)
	data := filepath.Join(fs, "data")
	if out, code := run(t, "backfill", "--data", data, "--input", log, "--checkpoint-every", "500"); code != 0 {
		t.Fatalf("backfill: exit %d\n%s", code, out)
	}
	want, st := loadVectors(t, data)
	tmpfs.ReadOnly(t, fs)
	out, code := run(t, "backfill", "--data", data, "--input", log)
	wantMsg := "orbitwatch backfill: data directory " + data + " is read-only (it is on a read-only file system)"
	if code != exitFailure || !strings.Contains(out, wantMsg) || strings.Contains(out, "damaged") {
		t.Fatalf("backfill on a read-only directory: exit %d, want %d and %q:\n%s", code, exitFailure, wantMsg, out)
	}
	ref := func(seq uint64) map[string][]uint64 {
		if seq != st.cut.Seq {
			t.Fatalf("a reader read the cut at %d, the store's last is %d", seq, st.cut.Seq)
		}
		return want
	}
	if ok := readAll(t, data, "hub-1", ref); len(ok) != 4 {
		t.Fatalf("only %v answered on a read-only directory", ok)
	}
}
