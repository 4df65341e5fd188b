package main

import (
	"crypto/sha256"
	"io/fs"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	badger "github.com/dgraph-io/badger/v4"

	"orbitwatch/delta"
	"orbitwatch/storage"
)

func TestVerifyPassesOnGoodStores(t *testing.T) {
	f := newFixture(t, 41, true, 100)
	last := f.seqs[len(f.seqs)-1]
	order, _ := readMatrix(t, f.replayCSV(last))
	nodes := len(order)
	for _, store := range []string{f.data, f.direct} {
		r := mustRunCmd(t, "verify", "--data", store)
		want := "verify: checkpoint " + strconv.FormatUint(last, 10) + " ("
		if !strings.HasPrefix(r.stdout, want) || strings.Count(r.stdout, "\n") != 1 || !strings.Contains(r.stdout, "every vector derived from the stored records equals the static recount") {
			t.Errorf("%s: summary %q", store, r.stdout)
		}
		if !strings.Contains(r.stderr, "verify: done, "+strconv.Itoa(nodes)+" nodes") {
			t.Errorf("%s: no progress on stderr: %q", store, r.stderr)
		}
	}
	// The generic recount path: directed graphlets on up to 3 nodes.
	dir := t.TempDir()
	directed := filepath.Join(dir, "directed")
	mustRunCmd(t, "backfill", "--data", directed, "--input", f.log, "--kind", "directed", "--max-nodes", "3", "--checkpoint-every", "200")
	r := mustRunCmd(t, "verify", "--data", directed)
	if !strings.Contains(r.stdout, "33 orbits each") {
		t.Errorf("directed store: summary %q", r.stdout)
	}
}

// reopen opens the store in dir read-write with its own settings and loads
// its latest checkpoint, for a test to commit a doctored one after it.
func reopen(t *testing.T, dir string) (*storage.Store, *storage.State) {
	t.Helper()
	ro, err := storage.OpenReadOnly(dir)
	if err != nil {
		t.Fatal(err)
	}
	set := ro.Settings()
	ro.Close()
	st, err := storage.Open(dir, set)
	if err != nil {
		t.Fatal(err)
	}
	state, err := st.Load()
	if err != nil {
		t.Fatal(err)
	}
	return st, state
}

// corrupt commits, as the next checkpoint, the latest state with node's
// record changed: its first count (the degree) raised by one.
func corrupt(t *testing.T, dir, node string) {
	t.Helper()
	st, state := reopen(t, dir)
	x, ok := state.Dict.Lookup(node)
	if !ok {
		t.Fatalf("fixture: node %q not in the store", node)
	}
	src, err := st.SourceAt(state.Seq)
	if err != nil {
		t.Fatal(err)
	}
	rec, err := src.Record(x)
	src.Close()
	if err != nil || len(rec) == 0 || rec[0] >= 0x7f {
		t.Fatalf("fixture: record of %q is %x (%v)", node, rec, err)
	}
	bad := append([]byte{rec[0] + 1}, rec[1:]...)
	err = st.Commit(&storage.Checkpoint{Seq: state.Seq + 1, Watermark: state.Watermark, Records: []storage.RecordChange{{Node: x, Data: bad}}})
	if err != nil {
		t.Fatal(err)
	}
	if err := st.Close(); err != nil {
		t.Fatal(err)
	}
}

// TestVerifyFailsOnAWrongRecord: a record that disagrees with the stored
// adjacency fails verify, naming the node.
func TestVerifyFailsOnAWrongRecord(t *testing.T) {
	f := newFixture(t, 42, true, 100)
	for _, node := range []string{"acct-000005", `shop "corner", east`} {
		dir := filepath.Join(t.TempDir(), "data")
		if err := os.CopyFS(dir, os.DirFS(f.data)); err != nil {
			t.Fatal(err)
		}
		mustRunCmd(t, "verify", "--data", dir)
		corrupt(t, dir, node)
		r := runCmd(t, "verify", "--data", dir)
		want := "record of node " + strconv.Quote(node)
		if r.code != 1 || !strings.Contains(r.stderr, want) || r.stdout != "" {
			t.Errorf("corrupted %q: exit %d, stdout %q, stderr %q; want exit 1 naming %q", node, r.code, r.stdout, r.stderr, want)
		}
	}
}

// snapshot hashes every file under dir by relative path.
func snapshot(t *testing.T, dir string) map[string][32]byte {
	t.Helper()
	out := map[string][32]byte{}
	if _, err := os.Stat(dir); err != nil {
		return out
	}
	err := filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err != nil || d.IsDir() {
			return err
		}
		b, err := os.ReadFile(p)
		if err != nil {
			return err
		}
		rel, _ := filepath.Rel(dir, p)
		out[rel] = sha256.Sum256(b)
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	return out
}

func sameSnapshot(a, b map[string][32]byte) bool {
	if len(a) != len(b) {
		return false
	}
	for k, v := range a {
		if b[k] != v {
			return false
		}
	}
	return true
}

// TestReadSideRefusesBadDirectories runs all four commands on a missing
// directory, one with other files, a Badger directory that is not ours,
// an orbitwatch store without checkpoints, and a store with a damaged
// manifest: each must exit 1 with a clear message and write nothing.
func TestReadSideRefusesBadDirectories(t *testing.T) {
	f := newFixture(t, 43, true, 200)
	root := t.TempDir()

	other := filepath.Join(root, "other")
	os.MkdirAll(other, 0o755)
	os.WriteFile(filepath.Join(other, "notes.txt"), []byte("quarterly figures\n"), 0o644)

	foreign := filepath.Join(root, "foreign")
	db, err := badger.Open(badger.DefaultOptions(foreign).WithLoggingLevel(badger.ERROR))
	if err != nil {
		t.Fatal(err)
	}
	if err := db.Update(func(txn *badger.Txn) error { return txn.Set([]byte("k"), []byte("v")) }); err != nil {
		t.Fatal(err)
	}
	db.Close()

	empty := filepath.Join(root, "empty")
	st, err := storage.Open(empty, storage.Settings{Kind: delta.Undirected, MaxNodes: 4, NumOrbits: 15})
	if err != nil {
		t.Fatal(err)
	}
	st.Close()

	damaged := filepath.Join(root, "damaged")
	if err := os.CopyFS(damaged, os.DirFS(f.data)); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(damaged, badger.ManifestFilename), []byte("not a manifest at all"), 0o644); err != nil {
		t.Fatal(err)
	}

	dirs := []struct {
		dir, msg string
	}{
		{filepath.Join(root, "missing"), "no such file or directory"},
		{other, "not an orbitwatch store"},
		{foreign, "not an orbitwatch store"},
		{empty, "holds no complete checkpoint"},
		{damaged, "damaged"},
	}
	out := filepath.Join(t.TempDir(), "out")
	commands := [][]string{
		{"query", "--node", "acct-000001"},
		{"history", "--node", "acct-000001", "--plot", out + ".svg"},
		{"export", "--format", "parquet", "--out", out + ".parquet"},
		{"verify"},
	}
	for _, d := range dirs {
		before := snapshot(t, d.dir)
		for _, c := range commands {
			args := append([]string{c[0], "--data", d.dir}, c[1:]...)
			r := runCmd(t, args...)
			if r.code != 1 || !strings.Contains(r.stderr, d.msg) || r.stdout != "" {
				t.Errorf("%v: exit %d, stdout %q, stderr %q; want exit 1 and %q", args, r.code, r.stdout, r.stderr, d.msg)
			}
		}
		if !sameSnapshot(before, snapshot(t, d.dir)) {
			t.Errorf("%s changed under the read-side commands", d.dir)
		}
	}
	if _, err := os.Stat(filepath.Join(root, "missing")); err == nil {
		t.Error("a read-side command created the missing directory")
	}
	if ents, _ := os.ReadDir(filepath.Dir(out)); len(ents) != 0 {
		t.Errorf("failed commands left files: %v", ents)
	}
}
