package main

import (
	"bytes"
	"compress/gzip"
	"encoding/csv"
	"fmt"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"
)

// summaryRE reads the ingest summary's first line.
var summaryRE = regexp.MustCompile(`(\d+) lines read, (\d+) applied, (\d+) rejected, (\d+) filtered, (\d+) header, (\d+) blank`)

// summaryCounts returns read, applied, rejected, filtered, header, blank.
func summaryCounts(t *testing.T, out string) [6]int {
	t.Helper()
	m := summaryRE.FindStringSubmatch(out)
	if m == nil {
		t.Fatalf("no summary in:\n%s", out)
	}
	var c [6]int
	for i := range c {
		c[i], _ = strconv.Atoi(m[i+1])
	}
	return c
}

// readRejects returns the rejects file's rows after its header.
func readRejects(t *testing.T, path string) [][]string {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rows, err := csv.NewReader(f).ReadAll()
	if err != nil || len(rows) == 0 || strings.Join(rows[0], ",") != "input,line,reason,raw" {
		t.Fatalf("rejects file: %v, %q", err, rows)
	}
	return rows[1:]
}

// hostileLog writes a CSV log of n good events with, at known data lines,
// every kind of bad line the issues name, and returns the file's lines
// (as written) and the 1-based file lines that must be rejected, with a
// word of each reason.
func hostileLog(t *testing.T, path string, n int) (lines []string, rejected map[int]string) {
	t.Helper()
	lines = []string{"ts,op,src,dst,amount,currency"}
	rejected = map[int]string{}
	add := func(line, reason string) {
		lines = append(lines, line)
		if reason != "" {
			rejected[len(lines)] = reason
		}
	}
	for i := 1; i <= n; i++ {
		ts := fmt.Sprintf("2026-03-01 09:%02d:%02d", i/60%60, i%60)
		switch i {
		case 10:
			add(ts+`,add,"acct-1,acct-2,5,EUR`, "unbalanced quote")
		case 20:
			add(ts+",add,acct-3,acct-4,5,EUR,extra", "wrong number of fields")
		case 30:
			add(ts+",add,"+strings.Repeat("z", 70000)+",acct-4,5,EUR", "src too long")
		case 40:
			add(ts+",add,acct\x00nul,acct-4,5,EUR", "NUL")
		case 50:
			add(ts+",add,acct-\xff,acct-4,5,EUR", "not valid UTF-8")
		case 60:
			add(ts+",add,acct-7,acct-7,5,EUR", "self-loop")
		case 70:
			add(ts+",remove,acct-never,acct-seen,5,EUR", "absent")
		case 80:
			add("", "")
		case 90:
			add(ts+",ADD,acct-8,acct-9,5,EUR", "")
		default:
			add(fmt.Sprintf("%s,add,acct-%d,shop-%d,%d.50,EUR", ts, i%97, (i*7+1)%31, i%20), "")
		}
	}
	if err := os.WriteFile(path, []byte(strings.Join(lines, "\n")+"\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	return lines, rejected
}

// TestIngestAccountsForEveryLine runs count over a log with an unbalanced
// quote, an extra field, ids too long, with NUL or not UTF-8, a self-loop,
// a remove of an absent edge and a blank line: the summary's lines read is
// the file's line count and its headings add up to it; --rejects holds
// every rejected line with its file line number and its exact text, the
// applier's rejects included; --strict names the file line.
func TestIngestAccountsForEveryLine(t *testing.T) {
	dir := t.TempDir()
	log := filepath.Join(dir, "hostile.csv")
	lines, rejected := hostileLog(t, log, 3000)
	rejects := filepath.Join(dir, "rejects.csv")
	out, code := run(t, "count", "--input", log, "--rejects", rejects)
	if code != 0 {
		t.Fatalf("count: exit %d\n%s", code, out)
	}
	c := summaryCounts(t, out)
	if c[0] != len(lines) || c[0] != c[1]+c[2]+c[3]+c[4]+c[5] {
		t.Fatalf("summary %v: lines read must be the file's %d lines and the sum of the headings\n%s", c, len(lines), out)
	}
	if c[2] != len(rejected) || c[4] != 1 || c[5] != 1 || c[3] != 0 {
		t.Fatalf("summary %v: want %d rejected, 1 header, 1 blank\n%s", c, len(rejected), out)
	}
	if !strings.Contains(out, "columns not used: amount, currency") {
		t.Errorf("summary does not name the unused columns:\n%s", out)
	}
	rows := readRejects(t, rejects)
	if len(rows) != len(rejected) {
		t.Fatalf("%d rejects written, want %d: %q", len(rows), len(rejected), rows)
	}
	for _, row := range rows {
		n, _ := strconv.Atoi(row[1])
		word, ok := rejected[n]
		if !ok || row[0] != log || !strings.Contains(row[2], word) {
			t.Errorf("reject %q: want line %d to be rejected for %q", row[:3], n, word)
			continue
		}
		if want := lines[n-1]; row[3] != want {
			t.Errorf("reject of line %d keeps %.60q, the line is %.60q", n, row[3], want)
		}
	}

	out, code = run(t, "count", "--input", log, "--strict")
	if code != exitBadInput || !strings.Contains(out, "line 11: unbalanced quote") {
		t.Fatalf("--strict: exit %d, want 3 (bad input) naming line 11 (data line 10):\n%s", code, out)
	}
}

// TestIngestJSONBlankAndAmountFilter: blank JSON lines are counted under
// their heading; --min-amount keeps events at or above the amount, counts
// the others as filtered (with a heading of their own) and rejects an
// amount it cannot read; filtered events use up their sequence numbers.
func TestIngestJSONBlankAndAmountFilter(t *testing.T) {
	dir := t.TempDir()
	log := filepath.Join(dir, "pay.jsonl")
	text := `{"src":"a","dst":"b","value":"250.00","memo":"rent"}` + "\n" +
		"\n" +
		`{"src":"b","dst":"c","value":99.99}` + "\n" +
		"   \n" +
		`{"src":"c","dst":"d","value":"lots"}` + "\n" +
		`{"src":"d","dst":"e","value":100,"src":"x"}` + "\n" +
		`{"src":"e","dst":"f","value":100}` + "\n"
	if err := os.WriteFile(log, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	outDir := filepath.Join(dir, "out")
	out, code := run(t, "replay", "--input", log, "--amount-column", "value", "--min-amount", "100", "--out", outDir, "--checkpoint-every", "1")
	if code != 0 {
		t.Fatalf("replay: exit %d\n%s", code, out)
	}
	c := summaryCounts(t, out)
	if c != [6]int{7, 2, 2, 1, 0, 2} {
		t.Fatalf("summary %v, want 7 read, 2 applied, 2 rejected, 1 filtered, 0 header, 2 blank\n%s", c, out)
	}
	for _, want := range []string{"filtered        1  amount below the minimum", "rejected        1  bad amount", "rejected        1  duplicate key", "keys not used: memo"} {
		if !strings.Contains(out, want) {
			t.Errorf("summary lacks %q:\n%s", want, out)
		}
	}
	// Records 1..5 (blank lines are none): checkpoints at every record,
	// the filtered and rejected ones too.
	for _, seq := range []string{"1", "2", "3", "4", "5"} {
		if _, err := os.Stat(filepath.Join(outDir, seq+".csv")); err != nil {
			t.Errorf("no checkpoint at sequence %s: %v", seq, err)
		}
	}
}

// TestIngestTruncatedGzip: a gzip log cut short fails the command (never
// exit 0 with lines unaccounted for) and names the last good line.
func TestIngestTruncatedGzip(t *testing.T) {
	dir := t.TempDir()
	var b strings.Builder
	b.WriteString("src,dst\n")
	for i := range 50000 {
		fmt.Fprintf(&b, "acct-%d,acct-%d\n", i%501, (i*13+1)%501)
	}
	var buf bytes.Buffer
	zw := gzip.NewWriter(&buf)
	zw.Write([]byte(b.String()))
	zw.Close()
	log := filepath.Join(dir, "cut.csv.gz")
	if err := os.WriteFile(log, buf.Bytes()[:buf.Len()/2], 0o644); err != nil {
		t.Fatal(err)
	}
	out, code := run(t, "count", "--input", log)
	m := regexp.MustCompile(`reading after line (\d+) \(the last complete line\)`).FindStringSubmatch(out)
	if code == 0 || m == nil {
		t.Fatalf("count of a cut gzip: exit %d, want a failure naming the last complete line:\n%s", code, out)
	}
	last, _ := strconv.Atoi(m[1])
	if c := summaryCounts(t, out); c[0] != last || c[0] != c[1]+c[2]+c[3]+c[4]+c[5] {
		t.Errorf("summary %v after the last complete line %d", c, last)
	}
}

// TestMissingColumnNamesTheFlag: a log without a src column gets one line
// naming the columns found and the flag that maps one.
func TestMissingColumnNamesTheFlag(t *testing.T) {
	log := filepath.Join(t.TempDir(), "pay.csv")
	if err := os.WriteFile(log, []byte("payer,payee,booked_at\na,b,2026-03-01\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	out, code := run(t, "count", "--input", log)
	if code != exitBadInput || !strings.Contains(out, "no column src (columns found: payer, payee, booked_at); map one with --src-column\n") {
		t.Fatalf("exit %d:\n%s", code, out)
	}
	out, code = run(t, "count", "--input", log, "--src-column", "payer", "--dst-column", "payee", "--ts-column", "booked_at")
	if code != 0 || summaryCounts(t, out)[1] != 1 {
		t.Fatalf("mapped: exit %d:\n%s", code, out)
	}
}
