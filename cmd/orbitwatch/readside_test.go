package main

import (
	"bytes"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"

	"orbitwatch/bench/gen"
	"orbitwatch/delta"
	"orbitwatch/shard"
	"orbitwatch/storage"
	"orbitwatch/stream"
)

// result is one run of the binary.
type result struct {
	stdout, stderr string
	code           int
}

// runCmd runs the orbitwatch binary with args and returns its standard
// output and error apart, and its exit code; a failure to start fails the
// test.
func runCmd(t *testing.T, args ...string) result {
	t.Helper()
	cmd := exec.Command(binaryPath(t), args...)
	var out, errb bytes.Buffer
	cmd.Stdout, cmd.Stderr = &out, &errb
	err := cmd.Run()
	code := 0
	var ee *exec.ExitError
	if errors.As(err, &ee) {
		code = ee.ExitCode()
	} else if err != nil {
		t.Fatalf("running orbitwatch %v: %v", args, err)
	}
	return result{out.String(), errb.String(), code}
}

// mustRunCmd runs the binary and fails the test unless it exits 0.
func mustRunCmd(t *testing.T, args ...string) result {
	t.Helper()
	r := runCmd(t, args...)
	if r.code != 0 {
		t.Fatalf("orbitwatch %s: exit %d\nstderr: %s", strings.Join(args, " "), r.code, r.stderr)
	}
	return r
}

// logLine is one data line of a test event log.
type logLine struct {
	ts       string // "" for no event time
	op       string
	src, dst string
}

// paymentsLog writes a fictional payments event log (our own scenario from
// bench/gen: households, shops, payroll providers, small groups) as CSV:
// every edge added one second apart, then churn (removes and re-adds), with
// a repeated payment (multiplicity 2, then one remove), a self-loop that
// is rejected, and node ids that need CSV quoting. With timed false no line
// carries an event time. It returns the path and the lines.
func paymentsLog(t *testing.T, dir string, seed uint64, timed bool) (string, []logLine) {
	t.Helper()
	cfg := gen.PaymentsConfig{Households: 70, Shops: 6, Payrolls: 2, ShopsPerHousehold: 2,
		ZipfS: 1.2, ZipfV: 3, PayrollShare: 0.5, GroupSize: 4, GroupPairShare: 0.5}
	pop, edges := gen.Payments(cfg, seed)
	start := time.Date(2026, 3, 1, 8, 0, 0, 0, time.UTC).Unix()
	events := gen.Grow(edges, start)
	events = append(events, gen.Churn(edges, 120, 15, start+int64(len(events))+60, seed+1)...)
	name := func(id uint32) string { return string(pop.AppendName(nil, id)) }
	var lines []logLine
	stamp := func(unix int64) string {
		if !timed {
			return ""
		}
		return time.Unix(unix, 0).UTC().Format(time.RFC3339)
	}
	for i, e := range events {
		op := "add"
		if e.Op == gen.Remove {
			op = "remove"
		}
		lines = append(lines, logLine{stamp(e.Unix), op, name(e.U), name(e.V)})
		switch i {
		case 40:
			// A repeated payment over an existing pair, and a self-loop.
			lines = append(lines, logLine{stamp(e.Unix), "add", name(e.U), name(e.V)})
			lines = append(lines, logLine{stamp(e.Unix), "add", name(e.U), name(e.U)})
		case 90:
			lines = append(lines, logLine{stamp(e.Unix), "add", `shop "corner", east`, name(e.U)})
			lines = append(lines, logLine{stamp(e.Unix), "add", `shop "corner", east`, " acct with space"})
		case 200:
			lines = append(lines, logLine{stamp(e.Unix), "remove", lines[41].src, lines[41].dst})
		}
	}
	path := filepath.Join(dir, fmt.Sprintf("payments-%d.csv", seed))
	var b bytes.Buffer
	cw := csv.NewWriter(&b)
	cw.Write([]string{"ts", "op", "src", "dst"})
	for _, l := range lines {
		cw.Write([]string{l.ts, l.op, l.src, l.dst})
	}
	cw.Flush()
	if err := os.WriteFile(path, b.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	return path, lines
}

// buildStore applies the log at path to a new store in dir the way backfill
// does, without the command: sequence = data record number, a cut after
// every `every` records and at the last one, each committed with its
// records and changed pairs. It returns the cut sequences.
func buildStore(t *testing.T, dir, path string, kind delta.Kind, maxNodes int, every uint64) []uint64 {
	t.Helper()
	c, err := shard.NewCounting(kind, maxNodes)
	if err != nil {
		t.Fatal(err)
	}
	st, err := storage.Open(dir, storage.Settings{Kind: kind, MaxNodes: maxNodes, NumOrbits: c.Catalog.NumOrbits()})
	if err != nil {
		t.Fatal(err)
	}
	defer func() {
		if err := st.Close(); err != nil {
			t.Fatal(err)
		}
	}()
	a := shard.NewApplier(c, 0, shard.Cuts{Lines: every})
	var seqs []uint64
	a.OnCut = func(cp *storage.Checkpoint) error {
		seqs = append(seqs, cp.Seq)
		return st.Commit(cp)
	}
	r, err := stream.Open(path, stream.Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer r.Close()
	for {
		ev, err := r.Next()
		if err == io.EOF {
			break
		}
		if err != nil {
			t.Fatalf("reading %s: %v", path, err)
		}
		err = a.Apply(uint64(ev.Line), ev)
		var rj *shard.Reject
		if err != nil && !errors.As(err, &rj) {
			t.Fatalf("line %d: %v", ev.Line, err)
		}
	}
	if err := a.Cut(); err != nil {
		t.Fatal(err)
	}
	return seqs
}

// readMatrix reads an orbit-matrix CSV (header node,0,1,…) into rows by
// node, keeping the node order.
func readMatrix(t *testing.T, path string) (order []string, rows map[string][]uint64) {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	recs, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatalf("%s: %v", path, err)
	}
	rows = map[string][]uint64{}
	for i, rec := range recs[1:] {
		v := make([]uint64, len(rec)-1)
		for j, s := range rec[1:] {
			if v[j], err = strconv.ParseUint(s, 10, 64); err != nil {
				t.Fatalf("%s row %d: %v", path, i+2, err)
			}
		}
		order = append(order, rec[0])
		rows[rec[0]] = v
	}
	return order, rows
}

// watermarkAt is the largest event time among the first n lines, from the
// log itself: the watermark a checkpoint at seq n must carry.
func watermarkAt(t *testing.T, lines []logLine, n uint64) time.Time {
	t.Helper()
	var wm time.Time
	for _, l := range lines[:n] {
		if l.ts == "" {
			continue
		}
		ts, err := time.Parse(time.RFC3339, l.ts)
		if err != nil {
			t.Fatal(err)
		}
		if ts.After(wm) {
			wm = ts
		}
	}
	return wm
}

// fixture is one event log with the data directory backfill writes from
// it, a store built from it directly (buildStore), and replay's checkpoint
// CSVs of the same log.
type fixture struct {
	log    string
	lines  []logLine
	data   string // written by the backfill binary
	direct string // written by buildStore
	replay string
	seqs   []uint64
	every  uint64
	// counting holds the --kind and --max-nodes flags the fixture used.
	counting []string
}

// newFixture writes a log, backfills it through the binary with
// checkpoints every `every` lines, builds the same store directly, and
// replays the log through the binary into CSVs; graphlets are undirected
// on up to 4 nodes.
func newFixture(t *testing.T, seed uint64, timed bool, every uint64) *fixture {
	t.Helper()
	return newFixtureOf(t, seed, timed, every, delta.Undirected, 4)
}

// newFixtureOf is newFixture for any kind and graphlet size.
func newFixtureOf(t *testing.T, seed uint64, timed bool, every uint64, kind delta.Kind, maxNodes int) *fixture {
	t.Helper()
	dir := t.TempDir()
	f := &fixture{data: filepath.Join(dir, "data"), direct: filepath.Join(dir, "direct"), replay: filepath.Join(dir, "replay"), every: every}
	f.log, f.lines = paymentsLog(t, dir, seed, timed)
	counting := []string{"--kind", kind.String(), "--max-nodes", strconv.Itoa(maxNodes)}
	n := strconv.FormatUint(every, 10)
	mustRunCmd(t, append([]string{"backfill", "--data", f.data, "--input", f.log, "--checkpoint-every", n}, counting...)...)
	f.seqs = buildStore(t, f.direct, f.log, kind, maxNodes, every)
	mustRunCmd(t, append([]string{"replay", "--input", f.log, "--checkpoint-every", n, "--out", f.replay}, counting...)...)
	f.counting = counting
	return f
}

func (f *fixture) replayCSV(n uint64) string {
	return filepath.Join(f.replay, strconv.FormatUint(n, 10)+".csv")
}
