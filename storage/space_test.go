package storage

import (
	"errors"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"

	"orbitwatch/delta"
	"orbitwatch/internal/tmpfs"
)

// The fill child commits model checkpoints into a store until one is
// refused; with fillCheckEnv=off it does so without the space check.
const (
	fillChildEnv = "ORBITWATCH_STORAGE_FILL_CHILD"
	fillCheckEnv = "ORBITWATCH_STORAGE_FILL_CHECK"
)

func fillChild(dir string) error {
	st, err := Open(dir, undirected4)
	if err != nil {
		return err
	}
	m := newModel(delta.Undirected, 15, 11, 20_000)
	for i := 1; i <= 200; i++ {
		m.run(uint64(i) * 5_000)
		if err := st.Commit(m.checkpoint()); err != nil {
			return err
		}
	}
	return st.Close()
}

// runFillChild runs the fill child on a fresh store in a 24 MiB tmpfs and
// returns its output and exit status.
func runFillChild(t *testing.T, check bool) (string, *os.ProcessState) {
	t.Helper()
	fs := filepath.Join(t.TempDir(), "fs")
	tmpfs.Mount(t, fs, 24<<20)
	cmd := exec.Command(os.Args[0], "-test.run=^$")
	cmd.Env = append(os.Environ(), fillChildEnv+"="+filepath.Join(fs, "store"))
	if !check {
		cmd.Env = append(cmd.Env, fillCheckEnv+"=off")
	}
	out, _ := cmd.CombinedOutput()
	return string(out), cmd.ProcessState
}

// TestFullDiskWithoutTheCheck is the measurement behind space.go: a
// process committing into a file system that fills up dies of SIGBUS in
// Badger's mapped log with a goroutine dump when the store does not check
// for room, and stops with a *SpaceError, nothing written, when it does.
func TestFullDiskWithoutTheCheck(t *testing.T) {
	out, ps := runFillChild(t, false)
	if ps.ExitCode() != 2 || !strings.Contains(out, "SIGBUS") || !strings.Contains(out, "goroutine ") {
		t.Fatalf("without the check: exit %d, want a SIGBUS death (exit 2):\n%.2000s", ps.ExitCode(), out)
	}
	out, ps = runFillChild(t, true)
	if ps.ExitCode() != 1 || strings.Contains(out, "goroutine ") || !strings.Contains(out, "needed to commit the cut at seq") {
		t.Fatalf("with the check: exit %d, want 1 with the refusal:\n%.2000s", ps.ExitCode(), out)
	}
	t.Logf("with the check: %s", strings.TrimSpace(out))
}

// TestCommitWithoutSpace fills a real size-limited file system under an
// open store: a commit, a close and an open are each refused with a
// *SpaceError that names the directory and the space needed, nothing of
// the refused commit is visible, and once space is freed the same commit
// goes through and the store holds exactly the scenario's state.
func TestCommitWithoutSpace(t *testing.T) {
	fs := filepath.Join(t.TempDir(), "fs")
	tmpfs.Mount(t, fs, 96<<20)
	dir := filepath.Join(fs, "store")
	st := mustOpen(t, dir, undirected4)
	defer func() { st.Close() }()
	m := newModel(delta.Undirected, 15, 5, 3000)
	m.run(3000)
	if err := st.Commit(m.checkpoint()); err != nil {
		t.Fatal(err)
	}
	m.run(6000)
	next := m.checkpoint()

	// Less free space than the next commit's room: refused, nothing
	// written.
	release := tmpfs.Fill(t, fs, int64(Room(dir, 0))-(1<<20))
	err := st.Commit(next)
	var se *SpaceError
	if !errors.Is(err, ErrNoSpace) || !errors.As(err, &se) {
		t.Fatalf("commit on a full file system: %v, want a *SpaceError", err)
	}
	if se.Dir != dir || se.Free >= se.Need || se.Seq != 3000 || se.Open {
		t.Fatalf("space error %+v: want dir %s, free < need, seq 3000", se, dir)
	}
	for _, want := range []string{"data directory " + dir + " has ", "needed to commit the cut at seq 6000", "the store stays at the checkpoint at seq 3000"} {
		if !strings.Contains(err.Error(), want) {
			t.Fatalf("message %q lacks %q", err, want)
		}
	}
	if strings.Contains(se.Reason(), dir) {
		t.Fatalf("Reason %q names the directory", se.Reason())
	}
	if st.Seq() != 3000 {
		t.Fatalf("store at %d after a refused commit, want 3000", st.Seq())
	}
	at3000 := newModel(delta.Undirected, 15, 5, 3000)
	at3000.run(3000)
	s, err := st.Load()
	if err != nil {
		t.Fatal(err)
	}
	checkState(t, st, s, at3000)

	// Space freed: the very same commit goes through.
	release()
	if err := st.Commit(next); err != nil {
		t.Fatalf("the refused commit, tried again with space: %v", err)
	}
	if s, err = st.Load(); err != nil {
		t.Fatal(err)
	}
	checkState(t, st, s, m)

	// Close needs room to write the memtable out; refused, it leaves
	// Badger open, and succeeds once space is freed.
	release = tmpfs.Fill(t, fs, int64(Room(dir, 0))-(1<<20))
	if err := st.Close(); !errors.Is(err, ErrNoSpace) || !strings.Contains(err.Error(), "needed to close it") {
		t.Fatalf("close on a full file system: %v", err)
	}
	// An open for writing is refused the same way (the store is still
	// held, so this is a second directory).
	other := filepath.Join(fs, "other")
	if _, err := Open(other, undirected4); !errors.As(err, &se) || !se.Open || !strings.Contains(err.Error(), "needed to open the store for writing") {
		t.Fatalf("open on a full file system: %v", err)
	}
	release()
	if err := st.Close(); err != nil {
		t.Fatalf("close after space was freed: %v", err)
	}
	st = mustOpen(t, dir, undirected4)
	if s, err = st.Load(); err != nil {
		t.Fatal(err)
	}
	checkState(t, st, s, m)
}

// TestRoom: the room asked for a write is its size, a memtable flush,
// slack, and the tables' size for a compaction.
func TestRoom(t *testing.T) {
	dir := t.TempDir()
	if got, want := Room(dir, 1000), uint64(1000+flushRoom+slackRoom); got != want {
		t.Fatalf("Room of an empty directory %d, want %d", got, want)
	}
	if err := os.WriteFile(filepath.Join(dir, "000001.sst"), make([]byte, 12345), 0o644); err != nil {
		t.Fatal(err)
	}
	if got, want := Room(dir, 1000), uint64(1000+flushRoom+slackRoom+12345); got != want {
		t.Fatalf("Room with a table %d, want %d", got, want)
	}
	if m := mib(3 << 19); m != "1.5 MiB" {
		t.Fatal(fmt.Sprint("mib: ", m))
	}
}
