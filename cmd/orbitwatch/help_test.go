package main

import (
	"os"
	"path/filepath"
	"sort"
	"strings"
	"testing"
)

// badValues gives, for commands that have one, a flag value the flag's own
// parser refuses (a number that is not one, a span or time that is not),
// so that the test sees a bad value, not only an unknown flag.
var badValues = map[string][]string{
	"catalog":     {"--max-nodes", "four"},
	"count":       {"--max-nodes", "four"},
	"replay":      {"--checkpoint-every", "-5"},
	"backfill":    {"--window", "30 days"},
	"query":       {"--at", "yesterday"},
	"history":     {"--from", "2026-13-01"},
	"export":      {"--seq", "last"},
	"verify":      {"--data"},
	"publish":     {"--replicas", "three"},
	"serve":       {"--keep-history", "0d"},
	"worker":      {"--shards", "many"},
	"demo":        {"--rate", "fast"},
	"nats-server": {"--store"},
}

// commandNames lists every command, hidden ones too, sorted.
func commandNames() []string {
	var names []string
	for n := range commands {
		names = append(names, n)
	}
	sort.Strings(names)
	return names
}

// checkUsageError holds r to a usage error: exit 2, nothing on standard
// output, and on standard error exactly two lines: the reason (containing
// want) and the pointer to the command's help.
func checkUsageError(t *testing.T, name string, args []string, r result, want string) {
	t.Helper()
	lines := strings.Split(strings.TrimSuffix(r.stderr, "\n"), "\n")
	if r.code != exitUsage || r.stdout != "" || len(lines) != 2 ||
		!strings.HasPrefix(lines[0], "orbitwatch "+name+": ") || !strings.Contains(lines[0], want) ||
		lines[1] != "run orbitwatch "+name+" -h for its flags" {
		t.Errorf("orbitwatch %s %s: exit %d, stdout %q, stderr %q; want exit 2 and two lines, the first containing %q",
			name, strings.Join(args, " "), r.code, r.stdout, r.stderr, want)
	}
}

// TestEveryCommandsHelpAndUsageErrors runs every command (hidden ones
// too): -h prints on standard output a one-line description (the command
// list's summary), an example of the command, and its flags with the
// required ones marked, and exits 0; an unknown flag, a bad flag value, a
// stray argument and a missing required flag each get one line and a
// pointer to the help, exit 2, and nothing else.
func TestEveryCommandsHelpAndUsageErrors(t *testing.T) {
	for _, name := range commandNames() {
		u, ok := usages[name]
		if !ok || u.example == "" {
			t.Errorf("command %s has no usages entry with an example (help.go)", name)
			continue
		}
		r := runCmd(t, name, "-h")
		lines := strings.Split(r.stdout, "\n")
		if r.code != 0 || r.stderr != "" || len(lines) < 4 {
			t.Errorf("%s -h: exit %d, stderr %q, stdout %q", name, r.code, r.stderr, r.stdout)
			continue
		}
		summary := commands[name].summary
		if want := strings.ToUpper(summary[:1]) + summary[1:] + "."; lines[0] != want {
			t.Errorf("%s -h: first line %q, want the description %q", name, lines[0], want)
		}
		if lines[2] != "example:" || !strings.HasPrefix(lines[3], "  orbitwatch "+name+" ") {
			t.Errorf("%s -h: lines 3–4 %q, want an example of the command", name, lines[2:4])
		}
		for _, req := range u.required {
			if !strings.Contains(r.stdout, "\n  --"+req+" ") || !strings.Contains(r.stdout, "(required)") {
				t.Errorf("%s -h does not mark --%s as required:\n%s", name, req, r.stdout)
			}
		}
		if strings.Contains(r.stdout, "\n  -"+"-data") && !strings.Contains(r.stdout, "\n  --data DIR") {
			t.Errorf("%s -h: --data is not written --data DIR:\n%s", name, r.stdout)
		}
		if r2 := runCmd(t, "help", name); r2.stdout != r.stdout || r2.code != 0 {
			t.Errorf("help %s differs from %s -h", name, name)
		}

		args := []string{"--no-such-flag"}
		checkUsageError(t, name, args, runCmd(t, append([]string{name}, args...)...), "flag provided but not defined: --no-such-flag")
		args = []string{"stray"}
		checkUsageError(t, name, args, runCmd(t, append([]string{name}, args...)...), `unexpected argument "stray"`)
		if bad, ok := badValues[name]; ok {
			want := "for flag --" + strings.TrimPrefix(bad[0], "--")
			if len(bad) == 1 {
				want = "flag needs an argument: " + bad[0]
			}
			checkUsageError(t, name, bad, runCmd(t, append([]string{name}, bad...)...), want)
		}
		if len(u.required) > 0 {
			r := runCmd(t, name)
			checkUsageError(t, name, nil, r, "--"+u.required[0]+" ")
			checkUsageError(t, name, nil, r, "is required")
			// The flag's value is named for what it is (--data DIR), not
			// for its Go type (--data string).
			if strings.Contains(r.stderr, " string is required") {
				t.Errorf("%s: %q names a type, not the value a user gives", name, r.stderr)
			}
		}
	}
}

// TestTopLevelHelpAndVersion: -h and help print the command list and the
// exit codes on standard output (nats-server, a test tool, hidden); no
// command is a usage error with the help on standard error; an unknown
// command gets one line; --version and version print the binary's
// version.
func TestTopLevelHelpAndVersion(t *testing.T) {
	for _, arg := range []string{"-h", "--help", "help"} {
		r := runCmd(t, arg)
		if r.code != 0 || r.stderr != "" || !strings.Contains(r.stdout, "exit codes:") || !strings.Contains(r.stdout, "  3  bad input") {
			t.Fatalf("orbitwatch %s: exit %d, stderr %q, stdout:\n%s", arg, r.code, r.stderr, r.stdout)
		}
		for _, name := range commandNames() {
			listed := strings.Contains(r.stdout, "\n  "+name+" ")
			if listed == hiddenCommands[name] {
				t.Errorf("orbitwatch %s: command %s listed %v, hidden %v", arg, name, listed, hiddenCommands[name])
			}
		}
	}
	if r := runCmd(t); r.code != exitUsage || r.stdout != "" || !strings.Contains(r.stderr, "commands:") {
		t.Errorf("orbitwatch alone: exit %d, stdout %q, stderr %q", r.code, r.stdout, r.stderr)
	}
	if r := runCmd(t, "tally"); r.code != exitUsage || strings.Count(r.stderr, "\n") != 2 || !strings.Contains(r.stderr, `unknown command "tally"`) {
		t.Errorf("orbitwatch tally: exit %d, stderr %q", r.code, r.stderr)
	}
	v := runCmd(t, "--version")
	if v.code != 0 || !strings.HasPrefix(v.stdout, "orbitwatch ") || strings.Count(v.stdout, "\n") != 1 || len(v.stdout) < len("orbitwatch x\n") {
		t.Fatalf("--version: exit %d, stdout %q", v.code, v.stdout)
	}
	if v2 := runCmd(t, "version"); v2 != v {
		t.Errorf("version %q differs from --version %q", v2.stdout, v.stdout)
	}
}

// TestExitCodes: the documented codes on real runs. 1 for the machine's
// faults (a file that cannot be opened), 2 for the command line (a flag
// value out of range, flags that need each other), 3 for the input (a log
// without a column it needs, a --strict stop at a bad line).
func TestExitCodes(t *testing.T) {
	dir := t.TempDir()
	good := filepath.Join(dir, "good.csv")
	os.WriteFile(good, []byte("src,dst\na,b\nb,c\n"), 0o644)
	bad := filepath.Join(dir, "bad.csv")
	os.WriteFile(bad, []byte("src,dst\na,b\nc,c\n"), 0o644)
	noCol := filepath.Join(dir, "nocol.csv")
	os.WriteFile(noCol, []byte("payer,payee\na,b\n"), 0o644)
	for _, c := range []struct {
		args []string
		code int
		msg  string
	}{
		{[]string{"count", "--input", good}, exitOK, ""},
		{[]string{"count", "--input", filepath.Join(dir, "missing.csv")}, exitFailure, "no such file"},
		{[]string{"count", "--input", good, "--max-nodes", "9"}, exitUsage, "--max-nodes"},
		{[]string{"catalog", "--kind", "bipartite"}, exitUsage, "--kind"},
		{[]string{"catalog", "--max-nodes", "9"}, exitUsage, "orbitwatch catalog: --max-nodes: undirected graphlets on 2..9 nodes are not supported"},
		{[]string{"count", "--input", good, "--amount-column", "value"}, exitUsage, "give --min-amount too"},
		{[]string{"count", "--input", good, "--min-amount", "ten"}, exitUsage, "--min-amount"},
		{[]string{"count", "--input", good, "--format", "xml"}, exitUsage, "--format must be csv or jsonl"},
		{[]string{"replay", "--input", good, "--out", filepath.Join(dir, "r"), "--checkpoint-every", "0"}, exitUsage, "--checkpoint-every must be positive"},
		{[]string{"count", "--input", noCol}, exitBadInput, "map one with --src-column"},
		{[]string{"backfill", "--data", filepath.Join(dir, "d"), "--input", noCol}, exitBadInput, "no column src (columns found: payer, payee); map one with --src-column"},
		{[]string{"backfill", "--data", filepath.Join(dir, "d"), "--input", "-"}, exitUsage, "not standard input"},
		{[]string{"count", "--input", bad, "--strict"}, exitBadInput, "line 3: self-loop"},
		{[]string{"count", "--input", bad}, exitOK, ""},
	} {
		r := runCmd(t, c.args...)
		if r.code != c.code || !strings.Contains(r.stderr, c.msg) {
			t.Errorf("orbitwatch %s: exit %d, want %d with %q; stderr:\n%s", strings.Join(c.args, " "), r.code, c.code, c.msg, r.stderr)
		}
	}
}

// TestUserMessage: package prefixes and parts repeated back to back are
// left out of what a user reads; the last part is kept whatever it is.
func TestUserMessage(t *testing.T) {
	for _, c := range []struct {
		name, err, want string
	}{
		{"catalog", "catalog: undirected graphlets on 2..9 nodes are not supported", "undirected graphlets on 2..9 nodes are not supported"},
		{"query", "storage: open /d: damaged Badger directory: bad magic", "open /d: damaged Badger directory: bad magic"},
		{"verify", "verify: verify: checkpoint 3: mismatch", "checkpoint 3: mismatch"},
		{"count", "in.csv: stream: in.csv: csv header: no column", "in.csv: csv header: no column"},
		{"count", "x: storage", "x: storage"},
	} {
		if got := userMessage(c.name, errorString(c.err)); got != c.want {
			t.Errorf("userMessage(%q, %q) = %q, want %q", c.name, c.err, got, c.want)
		}
	}
}

type errorString string

func (e errorString) Error() string { return string(e) }
