package bench

import (
	"bufio"
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"time"

	"orbitwatch/bench/gen"
)

// Python returns the interpreter the outside-reference timings run on:
// $ORBITWATCH_PYTHON, else /usr/bin/python3, else python3 from PATH; the
// first that imports both networkx and igraph. The error says what was
// tried when none does.
func Python() (string, error) {
	var tried []string
	for _, p := range []string{os.Getenv("ORBITWATCH_PYTHON"), "/usr/bin/python3", "python3"} {
		if p == "" {
			continue
		}
		out, err := exec.Command(p, "-c", "import networkx, igraph").CombinedOutput()
		if err == nil {
			return p, nil
		}
		tried = append(tried, fmt.Sprintf("%s: %v %s", p, err, bytes.TrimSpace(out)))
	}
	return "", fmt.Errorf("no Python 3 with networkx and python-igraph (set ORBITWATCH_PYTHON); tried: %s", strings.Join(tried, "; "))
}

// PythonWith is Python checked to import modules too (a comma-separated
// import list, e.g. "scipy.stats, numpy").
func PythonWith(modules string) (string, error) {
	py, err := Python()
	if err != nil {
		return "", err
	}
	if out, err := exec.Command(py, "-c", "import "+modules).CombinedOutput(); err != nil {
		return "", fmt.Errorf("%s cannot import %s: %v: %s", py, modules, err, bytes.TrimSpace(out))
	}
	return py, nil
}

// RunPythonJSON runs script by py with args and decodes its standard
// output, one JSON value, into out; a failing script's error carries its
// standard error.
func RunPythonJSON(py, script string, out any, args ...string) error {
	cmd := exec.Command(py, append([]string{"-c", script}, args...)...)
	var stdout, stderr bytes.Buffer
	cmd.Stdout, cmd.Stderr = &stdout, &stderr
	if err := cmd.Run(); err != nil {
		return fmt.Errorf("%s: %v: %s", py, err, bytes.TrimSpace(stderr.Bytes()))
	}
	if err := json.Unmarshal(stdout.Bytes(), out); err != nil {
		return fmt.Errorf("decoding the reply of %s: %v", py, err)
	}
	return nil
}

// trianglesScript loads an edge list (one "u v" per line), then times only
// networkx.triangles(G) with time.perf_counter (wall) and
// time.process_time (CPU), and prints both in seconds and Σ_x triangles(x)
// (= 3 × the number of triangles).
const trianglesScript = `
import sys, time
import networkx as nx
G = nx.Graph()
with open(sys.argv[1]) as f:
    G.add_edges_from((int(a), int(b)) for a, b in (line.split() for line in f))
t0, c0 = time.perf_counter(), time.process_time()
tri = nx.triangles(G)
t1, c1 = time.perf_counter(), time.process_time()
print(t1 - t0, c1 - c0, sum(tri.values()))
`

// NetworkxRun is one timed call of networkx.triangles.
type NetworkxRun struct {
	Wall, CPU time.Duration
	// Sum is Σ_x triangles(x), three times the number of triangles.
	Sum uint64
	// Skipped says networkx was not run: a node's degree is above
	// NetworkxMaxDegree.
	Skipped bool
}

// NetworkxMaxDegree is the largest degree of a graph TimeNetworkxTriangles
// runs networkx on: networkx.triangles builds the set of a node's
// neighbours for every neighbour it visits, d² steps at a node of degree
// d, so a merchant of 10⁵ customers would keep it busy for hours.
const NetworkxMaxDegree = 10000

// NetworkxTriangles writes edges to a temporary edge list, runs
// networkx.triangles (networkx 2.8) on it in python and returns the wall
// time of that call alone (interpreter start-up and graph loading
// excluded) and Σ_x triangles(x), the sum of per-node triangle counts.
func NetworkxTriangles(python string, edges []gen.Edge) (time.Duration, uint64, error) {
	r, err := TimeNetworkxTriangles(python, edges)
	return r.Wall, r.Sum, err
}

// TimeNetworkxTriangles is NetworkxTriangles with the call's CPU time too.
// A graph with a node above NetworkxMaxDegree is not run (Skipped).
func TimeNetworkxTriangles(python string, edges []gen.Edge) (NetworkxRun, error) {
	deg := map[uint32]int{}
	for _, e := range edges {
		deg[e.U]++
		deg[e.V]++
		if deg[e.U] > NetworkxMaxDegree || deg[e.V] > NetworkxMaxDegree {
			return NetworkxRun{Skipped: true}, nil
		}
	}
	dir, err := os.MkdirTemp("", "orbitwatch-bench-")
	if err != nil {
		return NetworkxRun{}, err
	}
	defer os.RemoveAll(dir)
	path := filepath.Join(dir, "edges.txt")
	f, err := os.Create(path)
	if err != nil {
		return NetworkxRun{}, err
	}
	w := bufio.NewWriter(f)
	var line []byte
	for _, e := range edges {
		line = strconv.AppendUint(line[:0], uint64(e.U), 10)
		line = append(line, ' ')
		line = strconv.AppendUint(line, uint64(e.V), 10)
		line = append(line, '\n')
		w.Write(line)
	}
	if err := errors.Join(w.Flush(), f.Close()); err != nil {
		return NetworkxRun{}, fmt.Errorf("writing edge list: %w", err)
	}
	var stderr bytes.Buffer
	cmd := exec.Command(python, "-c", trianglesScript, path)
	DieWithParent(cmd)
	cmd.Stderr = &stderr
	out, err := cmd.Output()
	if err != nil {
		return NetworkxRun{}, fmt.Errorf("%s networkx.triangles: %v: %s", python, err, bytes.TrimSpace(stderr.Bytes()))
	}
	fields := strings.Fields(string(out))
	if len(fields) != 3 {
		return NetworkxRun{}, fmt.Errorf("networkx.triangles script printed %q, want two times and a sum", out)
	}
	wall, err1 := strconv.ParseFloat(fields[0], 64)
	cpu, err2 := strconv.ParseFloat(fields[1], 64)
	sum, err3 := strconv.ParseUint(fields[2], 10, 64)
	if err := errors.Join(err1, err2, err3); err != nil {
		return NetworkxRun{}, fmt.Errorf("networkx.triangles script printed %q: %w", out, err)
	}
	return NetworkxRun{Wall: seconds(wall), CPU: seconds(cpu), Sum: sum}, nil
}

func seconds(s float64) time.Duration { return time.Duration(s * float64(time.Second)) }

// LoadAverage returns the one-minute load average of the machine as
// /proc/loadavg gives it, or "?" where there is none: with the core count
// it says how much of the machine the measurement had.
func LoadAverage() string {
	b, err := os.ReadFile("/proc/loadavg")
	if f := strings.Fields(string(b)); err == nil && len(f) > 0 {
		return f[0]
	}
	return "?"
}
