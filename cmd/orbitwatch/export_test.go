package main

import (
	"bytes"
	"encoding/json"
	"fmt"
	"io"
	"math/big"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/parquet-go/parquet-go"
	"github.com/parquet-go/parquet-go/format"

	"orbitwatch/bench/gen"
	"orbitwatch/delta"
	"orbitwatch/delta/catalog"
	"orbitwatch/shard"
	"orbitwatch/storage"
	"orbitwatch/stream"
)

func TestExportCSVEqualsCountAndReplay(t *testing.T) {
	f := newFixture(t, 31, true, 100)
	dir := t.TempDir()
	count := mustRunCmd(t, "count", "--input", f.log)
	latest := filepath.Join(dir, "latest.csv")
	r := mustRunCmd(t, "export", "--data", f.data, "--format", "csv", "--out", latest)
	got, err := os.ReadFile(latest)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(got, []byte(count.stdout)) {
		t.Fatalf("export csv differs from count on the same log:\nexport:\n%.400s\ncount:\n%.400s", got, count.stdout)
	}
	if !bytes.Contains(got, []byte(`"shop ""corner"", east"`)) || !bytes.Contains(got, []byte(`" acct with space"`)) {
		t.Errorf("fixture: the ids that need quoting are not in the export")
	}
	if !strings.Contains(r.stderr, "export: done, "+strconv.Itoa(strings.Count(count.stdout, "\n")-1)+" nodes,") {
		t.Errorf("no progress on stderr: %q", r.stderr)
	}
	for _, n := range f.seqs {
		for _, store := range []string{f.data, f.direct} {
			out := filepath.Join(dir, strconv.FormatUint(n, 10)+filepath.Base(store)+".csv")
			mustRunCmd(t, "export", "--data", store, "--seq", strconv.FormatUint(n, 10), "--format", "csv", "--out", out)
			sameFile(t, out, f.replayCSV(n))
		}
	}
	// --at between checkpoints 200 and 300 is checkpoint 200.
	at := filepath.Join(dir, "at.csv")
	mustRunCmd(t, "export", "--data", f.data, "--at", watermarkAt(t, f.lines, 250).Format(time.RFC3339), "--format", "csv", "--out", at)
	sameFile(t, at, f.replayCSV(200))
}

func sameFile(t *testing.T, got, want string) {
	t.Helper()
	a, err := os.ReadFile(got)
	if err != nil {
		t.Fatal(err)
	}
	b, err := os.ReadFile(want)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(a, b) {
		t.Errorf("%s differs from %s", got, want)
	}
}

// readParquet reads an exported orbit matrix back with parquet-go, checking
// the documented schema: a string column node and INT64 columns o0… with
// the unsigned 64-bit integer logical type.
func readParquet(t *testing.T, path string, numOrbits int) (order []string, rows map[string][]uint64) {
	t.Helper()
	fh, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer fh.Close()
	fi, err := fh.Stat()
	if err != nil {
		t.Fatal(err)
	}
	pf, err := parquet.OpenFile(fh, fi.Size())
	if err != nil {
		t.Fatalf("%s: %v", path, err)
	}
	schema := pf.Schema()
	if n := len(schema.Columns()); n != numOrbits+1 {
		t.Fatalf("%d columns, want node and %d orbits", n, numOrbits)
	}
	nodeCol, ok := schema.Lookup("node")
	if !ok || nodeCol.Node.Type().Kind() != parquet.ByteArray || !isString(nodeCol.Node.Type().LogicalType()) {
		t.Fatalf("column node missing or not a string: %v", schema)
	}
	if nodeCol.ColumnIndex != 0 {
		t.Fatalf("column node is column %d, want the first", nodeCol.ColumnIndex)
	}
	cols := make([]int, numOrbits)
	for o := range cols {
		c, ok := schema.Lookup("o" + strconv.Itoa(o))
		if !ok {
			t.Fatalf("column o%d missing", o)
		}
		if c.ColumnIndex != o+1 {
			t.Fatalf("column o%d is column %d, want %d: columns must come in orbit order", o, c.ColumnIndex, o+1)
		}
		it := intType(c.Node.Type().LogicalType())
		if c.Node.Type().Kind() != parquet.Int64 || it == nil || it.BitWidth != 64 || it.IsSigned {
			t.Fatalf("column o%d is %v, want INT64 with logical type unsigned 64-bit", o, c.Node.Type())
		}
		cols[o] = c.ColumnIndex
	}
	rows = map[string][]uint64{}
	buf := make([]parquet.Row, 100)
	for _, rg := range pf.RowGroups() {
		rr := rg.Rows()
		for {
			n, err := rr.ReadRows(buf)
			for _, row := range buf[:n] {
				name := string(row[nodeCol.ColumnIndex].ByteArray())
				vec := make([]uint64, numOrbits)
				for o, c := range cols {
					vec[o] = row[c].Uint64()
				}
				order = append(order, name)
				rows[name] = vec
			}
			if err == io.EOF {
				break
			}
			if err != nil {
				t.Fatal(err)
			}
		}
		rr.Close()
	}
	if int64(len(order)) != pf.NumRows() {
		t.Fatalf("read %d rows, the file says %d", len(order), pf.NumRows())
	}
	return order, rows
}

func isString(lt *format.LogicalType) bool {
	if lt == nil {
		return false
	}
	_, ok := lt.Value.(*format.StringType)
	return ok
}

func intType(lt *format.LogicalType) *format.IntType {
	if lt == nil {
		return nil
	}
	it, _ := lt.Value.(*format.IntType)
	return it
}

func TestExportParquetEqualsCSV(t *testing.T) {
	f := newFixture(t, 32, true, 150)
	dir := t.TempDir()
	for _, n := range []uint64{150, f.seqs[len(f.seqs)-1]} {
		seq := strconv.FormatUint(n, 10)
		pq := filepath.Join(dir, seq+".parquet")
		mustRunCmd(t, "export", "--data", f.data, "--seq", seq, "--format", "parquet", "--out", pq)
		csvOut := filepath.Join(dir, seq+".csv")
		mustRunCmd(t, "export", "--data", f.data, "--seq", seq, "--format", "csv", "--out", csvOut)
		wantOrder, want := readMatrix(t, csvOut)
		gotOrder, got := readParquet(t, pq, 15)
		if strings.Join(gotOrder, "\x00") != strings.Join(wantOrder, "\x00") {
			t.Fatalf("seq %d: parquet node order differs from the CSV's", n)
		}
		for _, x := range wantOrder {
			if !equalUints(got[x], want[x]) {
				t.Errorf("seq %d node %q: parquet %v, csv %v", n, x, got[x], want[x])
			}
		}
	}
}

// TestExportParquetFullUint64 writes counts above the int64 range through
// the Parquet writer export uses and reads them back: they travel as INT64
// bits with the unsigned logical type, never as negative numbers.
func TestExportParquetFullUint64(t *testing.T) {
	out := filepath.Join(t.TempDir(), "m.parquet")
	huge := []uint64{1<<63 + 5, 1<<64 - 1, 1 << 63}
	big := make([]uint64, 15)
	copy(big, huge)
	small := make([]uint64, 15)
	small[14] = 7
	err := createAtomic(out, func(w io.Writer) error {
		m := newMatrixParquet(w, 15, nil)
		if err := m.row("acct-big", big); err != nil {
			return err
		}
		if err := m.row("acct-small", small); err != nil {
			return err
		}
		return m.close()
	})
	if err != nil {
		t.Fatal(err)
	}
	order, rows := readParquet(t, out, 15)
	if strings.Join(order, ",") != "acct-big,acct-small" {
		t.Fatalf("rows %q", order)
	}
	for o, c := range huge {
		if rows["acct-big"][o] != c {
			t.Errorf("orbit %d: %d, want %d", o, rows["acct-big"][o], c)
		}
	}
	if rows["acct-small"][14] != 7 || rows["acct-small"][0] != 0 {
		t.Errorf("acct-small: %v", rows["acct-small"])
	}
}

func TestExportFlags(t *testing.T) {
	f := newFixture(t, 33, false, 200)
	dir := t.TempDir()
	out := filepath.Join(dir, "m.csv")
	for _, c := range []struct {
		args []string
		code int
		msg  string
	}{
		{[]string{"--format", "xlsx", "--out", out}, 2, "--format must be csv or parquet"},
		{[]string{"--format", "csv"}, 2, "--out FILE is required"},
		{[]string{"--format", "csv", "--out", out, "--seq", "199"}, 1, "no checkpoint at or before seq 199"},
		{[]string{"--format", "csv", "--out", filepath.Join(dir, "no", "such", "dir", "m.csv")}, 1, "no such file"},
	} {
		r := runCmd(t, append([]string{"export", "--data", f.data}, c.args...)...)
		if r.code != c.code || !strings.Contains(r.stderr, c.msg) {
			t.Errorf("export %v: exit %d, stderr %q; want exit %d and %q", c.args, r.code, r.stderr, c.code, c.msg)
		}
	}
	if ents, _ := os.ReadDir(dir); len(ents) != 0 {
		t.Errorf("failed exports left files: %v", ents)
	}
}

// benchState is a Barabási–Albert graph of n nodes (m = 5) committed in
// one cut and loaded back as export loads it.
func benchState(b *testing.B, n int) *shard.Applier {
	b.Helper()
	c, err := shard.NewCounting(delta.Undirected, 4)
	if err != nil {
		b.Fatal(err)
	}
	st, err := storage.Open(filepath.Join(b.TempDir(), "data"), storage.Settings{Kind: delta.Undirected, MaxNodes: 4, NumOrbits: 15})
	if err != nil {
		b.Fatal(err)
	}
	defer st.Close()
	a := shard.NewApplier(c, 0, shard.Cuts{})
	a.OnCut = func(cp *storage.Checkpoint) error { return st.Commit(cp) }
	for i, e := range gen.BarabasiAlbert(n, 5, 7) {
		ev := stream.Event{Op: stream.OpAdd, Src: fmt.Sprintf("acct-%07d", e.U), Dst: fmt.Sprintf("acct-%07d", e.V)}
		if err := a.Apply(uint64(i+1), ev); err != nil {
			b.Fatal(err)
		}
	}
	if err := a.Cut(); err != nil {
		b.Fatal(err)
	}
	loaded, _, err := shard.StateAt(st, c, st.Seq())
	if err != nil {
		b.Fatal(err)
	}
	return loaded
}

// benchmarkExport measures the export walk (a vector derived for every
// node, encoding, no file system) in nodes per second, after the state is
// loaded.
func benchmarkExport(b *testing.B, newWriter func(w io.Writer) matrixWriter) {
	const n = 50000
	a := benchState(b, n)
	b.ReportAllocs()
	b.ResetTimer()
	var vec []uint64
	for b.Loop() {
		m := newWriter(io.Discard)
		for x, name := range a.Names() {
			var err error
			if vec, err = a.Vector(uint32(x), vec); err != nil {
				b.Fatal(err)
			}
			if err := m.row(name, vec); err != nil {
				b.Fatal(err)
			}
		}
		if err := m.close(); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(n)*float64(b.N)/b.Elapsed().Seconds(), "nodes/s")
}

func BenchmarkExportCSV(b *testing.B) {
	benchmarkExport(b, func(w io.Writer) matrixWriter { return newMatrixCSV(w, 15) })
}

func BenchmarkExportParquet(b *testing.B) {
	benchmarkExport(b, func(w io.Writer) matrixWriter { return newMatrixParquet(w, 15, nil) })
}

// TestMatrixCSVMatchesWriteMatrix holds the streaming CSV writer against
// count's writeMatrix on ids that need every kind of quoting.
func TestMatrixCSVMatchesWriteMatrix(t *testing.T) {
	names := []string{"acct-000001", `say "hi"`, "a,b", "line\nbreak", "cr\rhere", `\.`, " lead", "\ttab", "zahlung-ü", "x"}
	vec := delta.NewVectors(len(names), 15)
	for x := range names {
		for o := 0; o < 15; o++ {
			vec.Set(uint32(x), o, uint64(x*o)<<(o*4))
		}
	}
	vec.Set(3, 14, 1<<64-1)
	var want, got bytes.Buffer
	if err := writeMatrix(&want, names, vec); err != nil {
		t.Fatal(err)
	}
	m := newMatrixCSV(&got, 15)
	for x, n := range names {
		if err := m.row(n, vec.Row(uint32(x))); err != nil {
			t.Fatal(err)
		}
	}
	if err := m.close(); err != nil {
		t.Fatal(err)
	}
	if got.String() != want.String() {
		t.Errorf("streaming CSV:\n%q\nwriteMatrix:\n%q", got.String(), want.String())
	}
}

// TestReadSideOtherCatalogs runs the read side over the generic engines'
// stores: undirected graphlets on up to 5 nodes (73 orbits) and directed
// ones on up to 4 (730 orbits). query and export must equal replay and
// count on the same log, Parquet must equal the CSV, and verify must pass.
func TestReadSideOtherCatalogs(t *testing.T) {
	for _, c := range []struct {
		kind      delta.Kind
		maxNodes  int
		numOrbits int // Pržulj 2007 for undirected 2–5; our own enumeration for directed 2–4
	}{
		{delta.Undirected, 5, 73},
		{delta.Directed, 4, 730},
	} {
		f := newFixtureOf(t, 51, true, 150, c.kind, c.maxNodes)
		dir := t.TempDir()
		last := f.seqs[len(f.seqs)-1]
		count := mustRunCmd(t, append([]string{"count", "--input", f.log}, f.counting...)...)
		csvOut := filepath.Join(dir, "m.csv")
		mustRunCmd(t, "export", "--data", f.data, "--format", "csv", "--out", csvOut)
		if got, _ := os.ReadFile(csvOut); string(got) != count.stdout {
			t.Errorf("%s k=%d: export csv differs from count", c.kind, c.maxNodes)
		}
		pq := filepath.Join(dir, "m.parquet")
		mustRunCmd(t, "export", "--data", f.data, "--format", "parquet", "--out", pq)
		order, want := readMatrix(t, csvOut)
		_, got := readParquet(t, pq, c.numOrbits)
		for _, x := range order {
			if !equalUints(got[x], want[x]) {
				t.Errorf("%s k=%d node %q: parquet differs from csv", c.kind, c.maxNodes, x)
			}
		}
		_, rows := readMatrix(t, f.replayCSV(150))
		for _, node := range []string{order[0], order[len(order)/3]} {
			nv := queryJSON(t, "--data", f.data, "--node", node, "--seq", "150")
			if nv.Kind != c.kind.String() || nv.MaxNodes != c.maxNodes || len(nv.Orbits) != c.numOrbits || !equalUints(nv.Orbits, rows[node]) {
				t.Errorf("%s k=%d node %q at 150: query %s/%d with %d orbits, differs from replay", c.kind, c.maxNodes, node, nv.Kind, nv.MaxNodes, len(nv.Orbits))
			}
		}
		r := mustRunCmd(t, "verify", "--data", f.data)
		if !strings.Contains(r.stdout, "checkpoint "+strconv.FormatUint(last, 10)) || !strings.Contains(r.stdout, strconv.Itoa(c.numOrbits)+" orbits each") {
			t.Errorf("%s k=%d: verify said %q", c.kind, c.maxNodes, r.stdout)
		}
	}
}

// TestExportToStandardOutput: --out - writes the same bytes to standard
// output as to a file, CSV and Parquet alike, and nothing else there.
func TestExportToStandardOutput(t *testing.T) {
	f := newFixture(t, 34, true, 150)
	dir := t.TempDir()
	for _, format := range []string{"csv", "parquet"} {
		file := filepath.Join(dir, "m."+format)
		mustRunCmd(t, "export", "--data", f.data, "--format", format, "--out", file)
		want, err := os.ReadFile(file)
		if err != nil {
			t.Fatal(err)
		}
		r := mustRunCmd(t, "export", "--data", f.data, "--format", format, "--out", "-")
		if r.stdout != string(want) {
			t.Errorf("%s: --out - wrote %d bytes, the file %d, or other bytes", format, len(r.stdout), len(want))
		}
		if !strings.Contains(r.stderr, "to standard output") {
			t.Errorf("%s: the closing line does not say where the export went: %q", format, r.stderr)
		}
	}
	if ents, _ := os.ReadDir("."); slices.ContainsFunc(ents, func(e os.DirEntry) bool { return e.Name() == "-" }) {
		t.Error("export --out - wrote a file named -")
	}
}

// duckdbDir is the npm project of the DuckDB reader (read.mjs); .ci/run
// installs its packages with npm ci.
const duckdbDir = "testdata/duckdb"

// duckdbRead runs read.mjs (DuckDB's Node package, @duckdb/node-api) on a
// Parquet file and returns what it read. Without node or the package the
// test is skipped, except under CI, which installs both.
func duckdbRead(t *testing.T, path string) duckdbFile {
	t.Helper()
	node, err := exec.LookPath("node")
	if err == nil {
		_, err = os.Stat(filepath.Join(duckdbDir, "node_modules", "@duckdb", "node-api", "package.json"))
	}
	if err != nil {
		msg := fmt.Sprintf("DuckDB's Node package is not installed (%v): run npm ci --prefix cmd/orbitwatch/%s (bash .ci/run does)", err, duckdbDir)
		if os.Getenv("CI") != "" {
			t.Fatal(msg)
		}
		t.Skip(msg)
	}
	cmd := exec.Command(node, filepath.Join(duckdbDir, "read.mjs"), path)
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	out, err := cmd.Output()
	if err != nil {
		t.Fatalf("DuckDB reading %s: %v\n%s", path, err, stderr.String())
	}
	var got duckdbFile
	if err := json.Unmarshal(out, &got); err != nil {
		t.Fatalf("read.mjs printed %q: %v", out, err)
	}
	return got
}

// duckdbFile is what read.mjs prints.
type duckdbFile struct {
	Columns []struct {
		Name, Type string
	} `json:"columns"`
	Metadata map[string]string `json:"metadata"`
	Rows     string            `json:"rows"`
	Sums     map[string]string `json:"sums"`
}

// TestExportParquetReadByDuckDB holds a Parquet export against an outside
// reader, DuckDB (through its Node package): the columns come in orbit
// order with the types documented (node VARCHAR, o<id> UBIGINT), the
// key-value metadata names the kind, graphlet size, checkpoint, event
// time, the orbits' names and the version of the binary, and DuckDB's sum
// of every orbit column equals the sum over the CSV export of the same
// checkpoint. Directed 2–4 has 730 orbits, so o100 must follow o99.
func TestExportParquetReadByDuckDB(t *testing.T) {
	f := newFixtureOf(t, 35, true, 150, delta.Directed, 4)
	dir := t.TempDir()
	last := f.seqs[len(f.seqs)-1]
	pq := filepath.Join(dir, "m.parquet")
	mustRunCmd(t, "export", "--data", f.data, "--format", "parquet", "--out", pq)
	csvOut := filepath.Join(dir, "m.csv")
	mustRunCmd(t, "export", "--data", f.data, "--format", "csv", "--out", csvOut)
	order, rows := readMatrix(t, csvOut)
	cat, err := catalog.New(delta.Directed, 4)
	if err != nil {
		t.Fatal(err)
	}
	n := cat.NumOrbits()

	got := duckdbRead(t, pq)
	if len(got.Columns) != n+1 || got.Columns[0].Name != "node" || got.Columns[0].Type != "VARCHAR" {
		t.Fatalf("DuckDB sees %d columns starting %v; want node VARCHAR and %d orbits", len(got.Columns), got.Columns[:min(3, len(got.Columns))], n)
	}
	for o := 0; o < n; o++ {
		if c := got.Columns[o+1]; c.Name != "o"+strconv.Itoa(o) || c.Type != "UBIGINT" {
			t.Fatalf("DuckDB column %d is %s %s, want o%d UBIGINT", o+1, c.Name, c.Type, o)
		}
	}
	if got.Rows != strconv.Itoa(len(order)) {
		t.Errorf("DuckDB counts %s rows, the CSV export has %d", got.Rows, len(order))
	}
	nonZero := 0
	for o := 0; o < n; o++ {
		var want big.Int
		for _, x := range order {
			want.Add(&want, new(big.Int).SetUint64(rows[x][o]))
		}
		if want.Sign() > 0 {
			nonZero++
		}
		if s := got.Sums["o"+strconv.Itoa(o)]; s != want.String() {
			t.Errorf("orbit %d: DuckDB sums %s, the CSV export %s", o, s, want.String())
		}
	}
	if nonZero < 10 {
		t.Errorf("only %d orbit columns have a non-zero sum: the check sees too little", nonZero)
	}

	version := strings.TrimPrefix(strings.TrimSpace(mustRunCmd(t, "--version").stdout), "orbitwatch ")
	wm := watermarkAt(t, f.lines, last)
	for k, want := range map[string]string{
		metaKind: "directed", metaMaxNodes: "4", metaSeq: strconv.FormatUint(last, 10),
		metaEventTime: wm.Format(time.RFC3339Nano), metaVersion: version,
	} {
		if got.Metadata[k] != want {
			t.Errorf("metadata %s = %q, want %q", k, got.Metadata[k], want)
		}
	}
	var names []orbitMeta
	if err := json.Unmarshal([]byte(got.Metadata[metaOrbits]), &names); err != nil || len(names) != n {
		t.Fatalf("metadata %s: %d entries, %v; want %d", metaOrbits, len(names), err, n)
	}
	for o, m := range names {
		if want := cat.Orbits[o]; m.Column != "o"+strconv.Itoa(o) || m.Orbit != o || m.Name != want.Name || m.Graphlet != cat.Graphlets[want.Graphlet].Name {
			t.Fatalf("metadata orbit %d: %+v, want %s of %s", o, m, want.Name, cat.Graphlets[want.Graphlet].Name)
		}
	}
}
