package stream

import (
	"bufio"
	"bytes"
	"compress/gzip"
	"errors"
	"fmt"
	"io"
	"os"
	"regexp"
	"strings"
	"testing"
	"time"
)

// scriptCase is one case of testdata/sources.txt.
type scriptCase struct {
	name, opts string
	input      []string
	want       []string
	lineNo     int
}

func readScript(t *testing.T, path string) []scriptCase {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	var cases []scriptCase
	var cur *scriptCase
	inWant := false
	sc := bufio.NewScanner(f)
	for n := 1; sc.Scan(); n++ {
		line := sc.Text()
		switch {
		case strings.HasPrefix(line, "=== "):
			cases = append(cases, scriptCase{lineNo: n})
			cur = &cases[len(cases)-1]
			cur.name, cur.opts, _ = strings.Cut(line[4:], " | ")
			inWant = false
		case cur == nil:
			if line != "" && !strings.HasPrefix(line, "#") {
				t.Fatalf("%s:%d: text outside a case", path, n)
			}
		case line == "--- want":
			inWant = true
		case inWant:
			if line != "" {
				cur.want = append(cur.want, line)
			}
		default:
			cur.input = append(cur.input, line)
		}
	}
	if err := sc.Err(); err != nil {
		t.Fatal(err)
	}
	return cases
}

// build returns the input bytes and Options of a case.
func (c scriptCase) build(t *testing.T) ([]byte, Options) {
	var opts Options
	eol, gz, noeol := "\n", false, false
	for _, o := range strings.Fields(c.opts) {
		k, v, _ := strings.Cut(o, "=")
		switch k {
		case "format":
			opts.Format = v
		case "cols":
			opts.Columns = map[string]string{}
			for _, kv := range strings.Split(v, ",") {
				a, b, _ := strings.Cut(kv, ":")
				opts.Columns[a] = b
			}
		case "crlf":
			eol = "\r\n"
		case "gz":
			gz = true
		case "noeol":
			noeol = true
		case "min":
			opts.MinAmount = v
		default:
			t.Fatalf("line %d: unknown option %q", c.lineNo, o)
		}
	}
	text := strings.Join(c.input, eol)
	if !noeol && len(c.input) > 0 {
		text += eol
	}
	if !gz {
		return []byte(text), opts
	}
	return gzipBytes(t, []byte(text)), opts
}

func gzipBytes(t testing.TB, b []byte) []byte {
	var buf bytes.Buffer
	zw := gzip.NewWriter(&buf)
	if _, err := zw.Write(b); err != nil {
		t.Fatal(err)
	}
	if err := zw.Close(); err != nil {
		t.Fatal(err)
	}
	return buf.Bytes()
}

var derivedRE = regexp.MustCompile(`^[0-9a-f]{32}:([0-9]+)$`)

// formatEvent renders an event as the script does: file line, "#"
// record number, op, ids, then what is set.
func formatEvent(ev Event) string {
	var b strings.Builder
	fmt.Fprintf(&b, "%d#%d %s %q %q", ev.FileLine, ev.Line, ev.Op, ev.Src, ev.Dst)
	if ev.Neg {
		b.WriteString(" neg")
	}
	if ev.HasTS {
		fmt.Fprintf(&b, " ts=%s", ev.TS.Format(time.RFC3339Nano))
	}
	if m := derivedRE.FindStringSubmatch(ev.ID); m != nil && m[1] == fmt.Sprint(ev.Line) {
		b.WriteString(" id=derived")
	} else {
		fmt.Fprintf(&b, " id=%q", ev.ID)
	}
	return b.String()
}

// drain reads r to the end and renders every result, and at the end the
// reader's line counts and unused columns or keys.
func drain(r *Reader) []string {
	var got []string
	for {
		ev, err := r.Next()
		var le *LineError
		var fe *FilteredError
		switch {
		case err == nil:
			got = append(got, formatEvent(ev))
			continue
		case errors.As(err, &le):
			got = append(got, fmt.Sprintf("%d#%d reject %s: %q", le.FileLine, le.Line, le.Reason, le.Raw))
			continue
		case errors.As(err, &fe):
			got = append(got, fmt.Sprintf("%d#%d filtered %s", fe.FileLine, fe.Line, fe.Reason))
			continue
		case err == io.EOF:
			end := fmt.Sprintf("eof lines=%d header=%d blank=%d records=%d", r.Lines(), r.Header(), r.Blank(), r.Records())
			if u := r.Unused(); len(u) > 0 {
				end += " unused=" + strings.Join(u, ",")
			}
			got = append(got, end)
		default:
			got = append(got, "error: "+err.Error())
		}
		return got
	}
}

func TestSourceScript(t *testing.T) {
	cases := readScript(t, "testdata/sources.txt")
	if len(cases) < 20 {
		t.Fatalf("only %d cases read from the script", len(cases))
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			input, opts := c.build(t)
			var got []string
			r, err := NewReader("input", bytes.NewReader(input), opts)
			if err != nil {
				got = []string{"open error: " + err.Error()}
			} else {
				got = drain(r)
			}
			if strings.Join(got, "\n") != strings.Join(c.want, "\n") {
				t.Errorf("case at line %d:\ngot:\n%s\nwant:\n%s", c.lineNo, strings.Join(got, "\n"), strings.Join(c.want, "\n"))
			}
		})
	}
}
