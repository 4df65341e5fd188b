package pyref

import (
	"bytes"
	"embed"
	"encoding/json"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"os/exec"
	"sort"
	"strings"
	"sync"

	"orbitwatch/delta"
)

//go:embed py/*.py
var scripts embed.FS

// script returns the embedded Python files joined in name order, followed
// by the call of main.
func script() string {
	names, err := fs.Glob(scripts, "py/*.py")
	if err != nil {
		panic("pyref: " + err.Error())
	}
	sort.Strings(names)
	var b strings.Builder
	for _, n := range names {
		src, err := scripts.ReadFile(n)
		if err != nil {
			panic("pyref: " + err.Error())
		}
		b.Write(src)
		b.WriteString("\n")
	}
	b.WriteString("main()\n")
	return b.String()
}

var interp struct {
	once sync.Once
	path string
	err  error
}

// Interpreter returns the Python interpreter to use: the first of
// $ORBITWATCH_PYTHON, /usr/bin/python3 and python3 that imports networkx
// and igraph. The choice is made once per process.
func Interpreter() (string, error) {
	interp.once.Do(func() {
		var tried []string
		var cands []string
		if p := os.Getenv("ORBITWATCH_PYTHON"); p != "" {
			cands = append(cands, p)
		}
		cands = append(cands, "/usr/bin/python3", "python3")
		for _, c := range cands {
			out, err := exec.Command(c, "-c", "import networkx, igraph").CombinedOutput()
			if err == nil {
				interp.path = c
				return
			}
			tried = append(tried, fmt.Sprintf("%s (%v: %s)", c, err, strings.TrimSpace(lastLine(string(out)))))
		}
		interp.err = fmt.Errorf("pyref: no Python 3 that imports both networkx and igraph; tried %s; set ORBITWATCH_PYTHON or install networkx 2.8 and python-igraph 0.10", strings.Join(tried, ", "))
	})
	return interp.path, interp.err
}

func lastLine(s string) string {
	s = strings.TrimSpace(s)
	if i := strings.LastIndexByte(s, '\n'); i >= 0 {
		return s[i+1:]
	}
	return s
}

// Graph is a graph as the Python side reads it: nodes 0..Nodes−1 (all of
// them present, isolated or not) and edges i–j or arcs i→j; for a signed
// graph Neg[i] says Edges[i] is negative (the Python side sets the edge
// attribute sign to −1 or +1).
type Graph struct {
	Nodes    int         `json:"n"`
	Directed bool        `json:"directed"`
	Edges    [][2]uint32 `json:"edges"`
	Neg      []bool      `json:"neg,omitempty"`
}

// FromDelta copies the simple graph of g, with its signs when g is
// Signed.
func FromDelta(g *delta.Graph) Graph {
	r := Graph{Nodes: g.NumNodes(), Directed: g.Kind() == delta.Directed, Edges: [][2]uint32{}}
	g.ForEachEdge(func(u, v uint32, _ uint32) {
		r.Edges = append(r.Edges, [2]uint32{u, v})
		if g.Kind() == delta.Signed {
			r.Neg = append(r.Neg, g.Links(u, v)&delta.LinkNeg != 0)
		}
	})
	return r
}

// Unsigned returns g without its signs.
func (g Graph) Unsigned() Graph {
	g.Neg = nil
	return g
}

// Batch collects calls to run in one Python process. Add calls with Call or
// the typed helpers, then Run once; results land in the outputs given.
type Batch struct {
	calls []call
	outs  []any
}

type call struct {
	Fn   string         `json:"fn"`
	Args map[string]any `json:"args,omitempty"`
}

// Call adds a call of the registered Python function fn with keyword
// arguments args; Run decodes its JSON result into out, a pointer.
func (b *Batch) Call(fn string, args map[string]any, out any) {
	b.calls = append(b.calls, call{fn, args})
	b.outs = append(b.outs, out)
}

// Len returns the number of calls added.
func (b *Batch) Len() int { return len(b.calls) }

// Run starts one Python process, sends every call and decodes every
// result. An error names the failing call by index and function.
func (b *Batch) Run() error {
	py, err := Interpreter()
	if err != nil {
		return err
	}
	in, err := json.Marshal(map[string]any{"calls": b.calls})
	if err != nil {
		return fmt.Errorf("pyref: encoding calls: %w", err)
	}
	cmd := exec.Command(py, "-c", script())
	cmd.Stdin = bytes.NewReader(in)
	var stdout, stderr bytes.Buffer
	cmd.Stdout, cmd.Stderr = &stdout, &stderr
	if err := cmd.Run(); err != nil {
		return fmt.Errorf("pyref: %s: %w: %s", py, err, strings.TrimSpace(stderr.String()))
	}
	var resp struct {
		Results []struct {
			Value json.RawMessage `json:"value"`
			Error string          `json:"error"`
		} `json:"results"`
	}
	if err := json.Unmarshal(stdout.Bytes(), &resp); err != nil {
		return fmt.Errorf("pyref: decoding reply: %w", err)
	}
	if len(resp.Results) != len(b.calls) {
		return fmt.Errorf("pyref: %d results for %d calls", len(resp.Results), len(b.calls))
	}
	var errs []error
	for i, r := range resp.Results {
		if r.Error != "" {
			errs = append(errs, fmt.Errorf("pyref: call %d (%s): %s", i, b.calls[i].Fn, r.Error))
			continue
		}
		if err := json.Unmarshal(r.Value, b.outs[i]); err != nil {
			errs = append(errs, fmt.Errorf("pyref: call %d (%s): decoding result: %w", i, b.calls[i].Fn, err))
		}
	}
	return errors.Join(errs...)
}
