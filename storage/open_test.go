package storage

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	badger "github.com/dgraph-io/badger/v4"

	"orbitwatch/delta"
)

// TestSettingsMismatch: reopening with any other setting names it.
func TestSettingsMismatch(t *testing.T) {
	dir := t.TempDir()
	st := mustOpen(t, dir, undirected4)
	if err := st.Close(); err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		field string
		edit  func(*Settings)
	}{
		{"Kind", func(s *Settings) { s.Kind = delta.Directed }},
		{"MaxNodes", func(s *Settings) { s.MaxNodes = 5 }},
		{"NumOrbits", func(s *Settings) { s.NumOrbits = 73 }},
		{"Window", func(s *Settings) { s.Window = time.Hour }},
	}
	for _, c := range cases {
		s := undirected4
		c.edit(&s)
		st, err := Open(dir, s)
		if err == nil {
			st.Close()
			t.Fatalf("%s changed: open succeeded", c.field)
		}
		if !strings.Contains(err.Error(), "setting "+c.field+" ") {
			t.Fatalf("%s changed: error %q does not name the setting", c.field, err)
		}
	}
	st = mustOpen(t, dir, undirected4)
	st.Close()
}

// TestNotOurs: missing, foreign and plain-Badger directories are refused.
func TestNotOurs(t *testing.T) {
	base := t.TempDir()
	if _, err := OpenReadOnly(filepath.Join(base, "missing")); err == nil {
		t.Fatal("read-only open of a missing directory succeeded")
	}
	foreign := filepath.Join(base, "foreign")
	if err := os.MkdirAll(foreign, 0o755); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(foreign, "notes.txt"), []byte("ledger notes"), 0o644); err != nil {
		t.Fatal(err)
	}
	for _, open := range []func() (*Store, error){
		func() (*Store, error) { return Open(foreign, undirected4) },
		func() (*Store, error) { return OpenReadOnly(foreign) },
	} {
		if st, err := open(); err == nil || !strings.Contains(err.Error(), "not an orbitwatch store") {
			if st != nil {
				st.Close()
			}
			t.Fatalf("foreign directory: err %v", err)
		}
	}
	plain := filepath.Join(base, "plain")
	db, err := badger.OpenManaged(badger.DefaultOptions(plain).WithLoggingLevel(badger.WARNING))
	if err != nil {
		t.Fatal(err)
	}
	txn := db.NewTransactionAt(1, true)
	if err := txn.Set([]byte("k"), []byte("v")); err != nil {
		t.Fatal(err)
	}
	if err := txn.CommitAt(1, nil); err != nil {
		t.Fatal(err)
	}
	if err := db.Close(); err != nil {
		t.Fatal(err)
	}
	if st, err := Open(plain, undirected4); err == nil || !strings.Contains(err.Error(), "without a settings record") {
		if st != nil {
			st.Close()
		}
		t.Fatalf("plain Badger directory: err %v", err)
	}
	if _, err := Open(base, Settings{Kind: delta.Undirected, MaxNodes: 4}); err == nil {
		t.Fatal("open with NumOrbits 0 succeeded")
	}
}

// TestDamaged: a store whose Badger files were truncated, deleted or
// overwritten gives an error from Open and OpenReadOnly, never a panic or a
// silently fresh store.
func TestDamaged(t *testing.T) {
	cases := []struct {
		name   string
		damage func(t *testing.T, dir string)
	}{
		{"MANIFEST truncated", func(t *testing.T, dir string) { truncate(t, filepath.Join(dir, badger.ManifestFilename), 5) }},
		{"MANIFEST deleted", func(t *testing.T, dir string) { remove(t, filepath.Join(dir, badger.ManifestFilename)) }},
		{"table deleted", func(t *testing.T, dir string) { remove(t, firstFile(t, dir, ".sst")) }},
		{"table truncated", func(t *testing.T, dir string) {
			f := firstFile(t, dir, ".sst")
			fi, err := os.Stat(f)
			if err != nil {
				t.Fatal(err)
			}
			truncate(t, f, fi.Size()/2)
		}},
		{"table overwritten", func(t *testing.T, dir string) {
			f := firstFile(t, dir, ".sst")
			fi, err := os.Stat(f)
			if err != nil {
				t.Fatal(err)
			}
			junk := make([]byte, fi.Size())
			for i := range junk {
				junk[i] = byte(mix(uint64(i)))
			}
			if err := os.WriteFile(f, junk, 0o644); err != nil {
				t.Fatal(err)
			}
		}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			dir := t.TempDir()
			st := mustOpen(t, dir, undirected4)
			m := newModel(delta.Undirected, 15, 11, 400)
			m.run(3000)
			if err := st.Commit(m.checkpoint()); err != nil {
				t.Fatal(err)
			}
			if err := st.Close(); err != nil {
				t.Fatal(err)
			}
			c.damage(t, dir)
			for mode, open := range map[string]func() (*Store, error){
				"read-write": func() (*Store, error) { return Open(dir, undirected4) },
				"read-only":  func() (*Store, error) { return OpenReadOnly(dir) },
			} {
				st, err := open()
				if err == nil {
					// Damage Badger cannot see at open must still surface
					// when the state is read.
					_, err = st.Load()
					st.Close()
				}
				if err == nil {
					t.Fatalf("%s open and load of a damaged store succeeded", mode)
				}
				t.Logf("%s: %v", mode, err)
			}
		})
	}
}

func truncate(t *testing.T, path string, size int64) {
	t.Helper()
	if err := os.Truncate(path, size); err != nil {
		t.Fatal(err)
	}
}

func remove(t *testing.T, path string) {
	t.Helper()
	if err := os.Remove(path); err != nil {
		t.Fatal(err)
	}
}

func firstFile(t *testing.T, dir, ext string) string {
	t.Helper()
	m, err := filepath.Glob(filepath.Join(dir, "*"+ext))
	if err != nil || len(m) == 0 {
		t.Fatalf("no %s file in %s (%v)", ext, dir, err)
	}
	return m[0]
}

// TestCreateInterrupted: a Badger directory left without any record (a
// crash between Badger creating it and the settings commit) is created
// afresh rather than refused.
func TestCreateInterrupted(t *testing.T) {
	dir := t.TempDir()
	db, err := badger.OpenManaged(badger.DefaultOptions(dir).WithLoggingLevel(badger.WARNING))
	if err != nil {
		t.Fatal(err)
	}
	if err := db.Close(); err != nil {
		t.Fatal(err)
	}
	st := mustOpen(t, dir, undirected4)
	defer st.Close()
	if st.Settings() != undirected4 || st.Seq() != 0 {
		t.Fatalf("settings %+v seq %d after creating over an empty Badger directory", st.Settings(), st.Seq())
	}
	// Killed even earlier: only Badger's lock file exists.
	early := t.TempDir()
	if err := os.WriteFile(filepath.Join(early, "LOCK"), []byte("4242\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	st2 := mustOpen(t, early, undirected4)
	defer st2.Close()
	if st2.Settings() != undirected4 {
		t.Fatalf("settings %+v after creating over a lone lock file", st2.Settings())
	}
}

// TestInUse: a store open for writing cannot be opened for writing again,
// and the error says why; a reader meanwhile reads a private copy of its
// last complete checkpoint (view.go), removed when it closes.
func TestInUse(t *testing.T) {
	dir := t.TempDir()
	st := mustOpen(t, dir, undirected4)
	defer st.Close()
	m := newModel(delta.Undirected, 15, 3, 400)
	m.run(500)
	if err := st.Commit(m.checkpoint()); err != nil {
		t.Fatal(err)
	}
	ro, err := OpenReadOnly(dir)
	if err != nil {
		t.Fatalf("read-only open of a store open for writing: %v", err)
	}
	if ro.view == "" || ro.Seq() != 500 {
		t.Fatalf("reader beside a writer: view %q at %d, want a copy at 500", ro.view, ro.Seq())
	}
	s, err := ro.Load()
	if err != nil {
		t.Fatal(err)
	}
	checkState(t, ro, s, m)
	if err := ro.Close(); err != nil {
		t.Fatal(err)
	}
	if _, err := os.Stat(ro.view); !os.IsNotExist(err) {
		t.Fatalf("the reader's copy %s is left after Close: %v", ro.view, err)
	}
	if _, err := Open(dir, undirected4); err == nil || !strings.Contains(err.Error(), "in use") {
		t.Fatalf("second open of a store open for writing: %v", err)
	}
}
