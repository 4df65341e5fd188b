package storage

import (
	"errors"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"sync/atomic"
	"testing"
	"time"

	badger "github.com/dgraph-io/badger/v4"

	"orbitwatch/delta"
	"orbitwatch/internal/tmpfs"
)

// TestReadOnlyDirectory: on a read-only file system a store opened for
// writing is refused with "is read-only", not as damaged; a reader opens
// it, also when its writer was stopped without closing it.
func TestReadOnlyDirectory(t *testing.T) {
	fs := filepath.Join(t.TempDir(), "fs")
	tmpfs.Mount(t, fs, 64<<20)
	dir := filepath.Join(fs, "store")
	st := mustOpen(t, dir, undirected4)
	m := newModel(delta.Undirected, 15, 9, 500)
	m.run(1000)
	if err := st.Commit(m.checkpoint()); err != nil {
		t.Fatal(err)
	}
	if err := st.Close(); err != nil {
		t.Fatal(err)
	}
	writable := tmpfs.ReadOnly(t, fs)

	check := func(what string, viaCopy bool) {
		t.Helper()
		_, err := Open(dir, undirected4)
		if !errors.Is(err, ErrReadOnlyDir) || !strings.Contains(err.Error(), "data directory "+dir+" is read-only (it is on a read-only file system)") || strings.Contains(err.Error(), "damaged") {
			t.Fatalf("%s: open for writing: %v", what, err)
		}
		if _, err := Open(filepath.Join(dir, "new"), undirected4); err == nil || !strings.Contains(err.Error(), "cannot be created") {
			t.Fatalf("%s: create under a read-only directory: %v", what, err)
		}
		ro, err := OpenReadOnly(dir)
		if err != nil {
			t.Fatalf("%s: read-only open: %v", what, err)
		}
		defer ro.Close()
		if (ro.view != "") != viaCopy {
			t.Fatalf("%s: read through a private copy: %v, want %v", what, ro.view != "", viaCopy)
		}
		s, err := ro.Load()
		if err != nil {
			t.Fatal(err)
		}
		checkState(t, ro, s, m)
	}
	check("closed store", false)

	// A writer stopped without closing leaves logs that Badger replays only
	// by writing: the reader reads a private copy. (A store left open here
	// stands for a writer that was killed: its files are as a crash leaves
	// them.)
	writable()
	st = mustOpen(t, dir, undirected4)
	m.run(1500)
	if err := st.Commit(m.checkpoint()); err != nil {
		t.Fatal(err)
	}
	crashed := t.TempDir()
	copyDir(t, dir, crashed)
	if err := st.Close(); err != nil {
		t.Fatal(err)
	}
	if err := os.RemoveAll(dir); err != nil {
		t.Fatal(err)
	}
	copyDir(t, crashed, dir)
	tmpfs.ReadOnly(t, fs)
	check("store of a killed writer", true)

	// A writer killed between making a memtable log and sizing it leaves
	// an empty log, which Badger's read-only mode cannot open.
	writable()
	if err := os.WriteFile(filepath.Join(dir, "99999.mem"), nil, 0o644); err != nil {
		t.Fatal(err)
	}
	tmpfs.ReadOnly(t, fs)
	check("store with an empty log", true)
}

// copyDir copies the files of src into dst (made); Badger's logs keep
// their size past the data as holes, as a killed writer leaves them.
func copyDir(t *testing.T, src, dst string) {
	t.Helper()
	if err := os.MkdirAll(dst, 0o755); err != nil {
		t.Fatal(err)
	}
	ents, err := os.ReadDir(src)
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range ents {
		from, to := filepath.Join(src, e.Name()), filepath.Join(dst, e.Name())
		fi, err := e.Info()
		if err != nil {
			t.Fatal(err)
		}
		n := int64(-1)
		if strings.HasSuffix(e.Name(), ".mem") || strings.HasSuffix(e.Name(), ".vlog") {
			f, err := os.Open(from)
			if err != nil {
				t.Fatal(err)
			}
			n, err = logEnd(f)
			f.Close()
			if err != nil {
				t.Fatal(err)
			}
		}
		if _, err := copyN(from, to, n); err != nil {
			t.Fatal(err)
		}
		if err := os.Truncate(to, fi.Size()); err != nil {
			t.Fatal(err)
		}
	}
}

// TestReadersBesideAWriter opens readers again and again while a writer
// commits checkpoints and Badger flushes its memtables into tables: every
// reader sees exactly the scenario's state at its checkpoint, never an
// older checkpoint than the last one committed before it opened, and the
// writer never notices. The writer goes on until the readers have met
// unflushed logs and tables several times each.
func TestReadersBesideAWriter(t *testing.T) {
	dir := t.TempDir()
	st := mustOpen(t, dir, undirected4)
	const seed, accts, step = 13, 20_000, 4000
	var committed atomic.Uint64
	var stop atomic.Bool
	writeErr := make(chan error, 1)
	ended := make(chan struct{})
	defer func() {
		stop.Store(true)
		<-ended
		st.Close()
	}()
	go func() {
		defer close(ended)
		m := newModel(delta.Undirected, 15, seed, accts)
		for i := 1; !stop.Load(); i++ {
			m.run(uint64(i) * step)
			if err := st.Commit(m.checkpoint()); err != nil {
				writeErr <- err
				return
			}
			committed.Store(m.seq)
		}
	}()
	seen := map[uint64]bool{}
	var reads, withLogs, withTables int
	deadline := time.Now().Add(2 * time.Minute)
	for len(seen) < 6 || withLogs < 3 || withTables < 3 {
		if time.Now().After(deadline) {
			t.Fatalf("in two minutes the readers did not meet the writer's logs and tables: %d reads, %d checkpoints seen, %d with logs, %d with tables", reads, len(seen), withLogs, withTables)
		}
		select {
		case err := <-writeErr:
			t.Fatal(err)
		default:
		}
		before := committed.Load()
		logs, tables := countFiles(t, dir)
		ro, err := OpenReadOnly(dir)
		if err != nil {
			t.Fatalf("reader beside a writer: %v", err)
		}
		if ro.view == "" {
			t.Fatal("a reader beside a writer read in place")
		}
		if ro.Seq() < before {
			t.Fatalf("reader at %d, the writer had committed %d before it opened", ro.Seq(), before)
		}
		s, err := ro.Load()
		if err != nil {
			t.Fatal(err)
		}
		if s.Seq > 0 {
			want := newModel(delta.Undirected, 15, seed, accts)
			want.run(s.Seq)
			checkState(t, ro, s, want)
		}
		if err := ro.Close(); err != nil {
			t.Fatal(err)
		}
		reads++
		seen[s.Seq] = true
		if logs > 0 && s.Seq > 0 {
			withLogs++
		}
		if tables > 0 && s.Seq > 0 {
			withTables++
		}
	}
	t.Logf("%d reads at %d distinct checkpoints; %d with unflushed logs, %d with tables", reads, len(seen), withLogs, withTables)
}

// countFiles counts a Badger directory's logs with data and its tables.
func countFiles(t *testing.T, dir string) (logs, tables int) {
	t.Helper()
	ents, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range ents {
		switch {
		case strings.HasSuffix(e.Name(), ".mem"):
			logs++
		case strings.HasSuffix(e.Name(), ".sst"):
			tables++
		}
	}
	return logs, tables
}

// badgerEnd is the end offset Badger's own read-only replay finds in a
// memtable log, from its refusal "end offset: E < size: S" (the whole
// file when it accepts it).
var badgerEnd = regexp.MustCompile(`end offset: (\d+) < size: (\d+)`)

// TestLogEndAgreesWithBadger holds logEnd against Badger's replay: a live
// writer's memtable log, whole and cut at many points (a copy taken in
// the middle of a write), must end where Badger's read-only replay says
// it ends.
func TestLogEndAgreesWithBadger(t *testing.T) {
	dir := t.TempDir()
	st := mustOpen(t, dir, undirected4)
	defer st.Close()
	m := newModel(delta.Undirected, 15, 21, 300)
	for i := 1; i <= 6; i++ {
		m.run(uint64(i) * 700)
		if err := st.Commit(m.checkpoint()); err != nil {
			t.Fatal(err)
		}
	}
	var log string
	ents, _ := os.ReadDir(dir)
	for _, e := range ents {
		if strings.HasSuffix(e.Name(), ".mem") {
			log = e.Name()
		}
	}
	if log == "" {
		t.Fatal("no memtable log in the writer's directory")
	}
	whole, err := os.ReadFile(filepath.Join(dir, log))
	if err != nil {
		t.Fatal(err)
	}
	end, err := logEnd(strings.NewReader(string(whole)))
	if err != nil {
		t.Fatal(err)
	}
	if end <= logHeaderSize || end >= int64(len(whole)) {
		t.Fatalf("logEnd of a live log %d of %d bytes", end, len(whole))
	}
	cuts := []int64{int64(len(whole)), end, end - 1, end - 7, logHeaderSize + 1, logHeaderSize + 3}
	for i := int64(1); i <= 40; i++ {
		cuts = append(cuts, logHeaderSize+(end-logHeaderSize)*i/41)
	}
	for _, n := range cuts {
		got, err := logEnd(strings.NewReader(string(whole[:n])))
		if err != nil {
			t.Fatal(err)
		}
		if want := badgerReplayEnd(t, dir, log, whole[:n]); got != want {
			t.Fatalf("log cut at %d of %d: logEnd %d, Badger's replay ends at %d", n, len(whole), got, want)
		}
	}
}

// badgerReplayEnd opens, read-only, a directory holding dir's manifest
// and key registry and the memtable log name with content b, and returns
// where Badger's replay of the log ends.
func badgerReplayEnd(t *testing.T, dir, name string, b []byte) int64 {
	t.Helper()
	tmp := t.TempDir()
	for _, f := range []string{badger.ManifestFilename, badger.KeyRegistryFileName} {
		c, err := os.ReadFile(filepath.Join(dir, f))
		if err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(filepath.Join(tmp, f), c, 0o600); err != nil {
			t.Fatal(err)
		}
	}
	if err := os.WriteFile(filepath.Join(tmp, name), b, 0o600); err != nil {
		t.Fatal(err)
	}
	db, err := badger.OpenManaged(badger.DefaultOptions(tmp).WithReadOnly(true).WithLoggingLevel(badger.ERROR))
	if err == nil {
		db.Close()
		return int64(len(b))
	}
	m := badgerEnd.FindStringSubmatch(err.Error())
	if m == nil {
		if len(b) <= logHeaderSize+8 {
			return logHeaderSize // too short for Badger to read an entry
		}
		t.Fatalf("Badger's read-only open of a log of %d bytes: %v", len(b), err)
	}
	e, _ := strconv.ParseInt(m[1], 10, 64)
	return e
}
