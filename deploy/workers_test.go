package deploy

import (
	"encoding/csv"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"net/http"
	"net/url"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"

	"orbitwatch/stream"
)

// worker is an `orbitwatch worker` child process.
type worker struct {
	cmd  *exec.Cmd
	out  *lockedBuffer
	done chan struct{}
	api  string // base URL of its HTTP API
}

// startWorkers starts n workers, shards 0…n−1, against the cluster's three
// servers, and waits for each to print its API address.
func startWorkers(t *testing.T, c *cluster, n int) []*worker {
	t.Helper()
	bin := buildBinary(t, "./cmd/orbitwatch", "orbitwatch")
	ws := make([]*worker, n)
	for i := range ws {
		w := &worker{out: &lockedBuffer{}, done: make(chan struct{})}
		w.cmd = exec.Command(bin, "worker", "--nats", strings.Join(c.clients[:], ","), "--replicas", "3",
			"--stream", testStream, "--subject", testSubject, "--shard", strconv.Itoa(i), "--shards", strconv.Itoa(n),
			"--data", filepath.Join(t.TempDir(), "data"), "--http", "127.0.0.1:0", "--cut-every", "1m")
		w.cmd.Stdout, w.cmd.Stderr = w.out, w.out
		if err := w.cmd.Start(); err != nil {
			t.Fatal(err)
		}
		go func() {
			w.cmd.Wait()
			close(w.done)
		}()
		t.Cleanup(func() {
			if t.Failed() {
				// A failed test gets the worker's goroutine stacks (SIGQUIT).
				w.cmd.Process.Signal(syscall.SIGQUIT)
				select {
				case <-w.done:
				case <-time.After(5 * time.Second):
				}
			}
			w.cmd.Process.Signal(syscall.SIGKILL)
			<-w.done
			if t.Failed() {
				// ORBITWATCH_DEPLOY_DUMP=DIR keeps each worker's whole
				// output, stacks included, as DIR/worker-<shard>.txt.
				if dump := os.Getenv("ORBITWATCH_DEPLOY_DUMP"); dump != "" {
					os.WriteFile(filepath.Join(dump, fmt.Sprintf("worker-%d.txt", i)), []byte(w.output()), 0o644)
				}
				t.Logf("worker %d output (tail):\n%s", i, tail(w.output(), 30))
			}
		})
		ws[i] = w
	}
	for i, w := range ws {
		w.api = w.waitFor(t, i, regexp.MustCompile(`HTTP API (http://\S+)`))
	}
	return ws
}

func (w *worker) output() string {
	w.out.mu.Lock()
	defer w.out.mu.Unlock()
	return w.out.String()
}

func (w *worker) waitFor(t *testing.T, i int, re *regexp.Regexp) string {
	t.Helper()
	deadline := time.Now().Add(60 * time.Second)
	for time.Now().Before(deadline) {
		if m := re.FindStringSubmatch(w.output()); m != nil {
			return m[1]
		}
		select {
		case <-w.done:
			t.Fatalf("worker %d exited before printing %v:\n%s", i, re, w.output())
		case <-time.After(20 * time.Millisecond):
		}
	}
	t.Fatalf("worker %d did not print %v:\n%s", i, re, w.output())
	return ""
}

// shardLine is the part of a /v1/status entry this test reads.
type shardLine struct {
	Shard      int    `json:"shard"`
	AppliedSeq uint64 `json:"applied_seq"`
	Ready      bool   `json:"ready"`
	Error      string `json:"error"`
}

func getJSON(base, path string, v any) (int, error) {
	resp, err := http.Get(base + path)
	if err != nil {
		return 0, err
	}
	defer resp.Body.Close()
	b, err := io.ReadAll(resp.Body)
	if err != nil {
		return resp.StatusCode, err
	}
	if err := json.Unmarshal(b, v); err != nil {
		return resp.StatusCode, fmt.Errorf("%s: %v: %s", path, err, b)
	}
	return resp.StatusCode, nil
}

// waitApplied waits until every worker has applied the log exactly up to
// seq (its reads answer there).
func waitApplied(t *testing.T, ws []*worker, seq uint64) {
	t.Helper()
	waitAppliedFrom(t, ws, seq, true)
}

// waitAppliedFrom waits until every worker has applied the log up to at
// least seq, and exactly seq when exact.
func waitAppliedFrom(t *testing.T, ws []*worker, seq uint64, exact bool) {
	t.Helper()
	deadline := time.Now().Add(120 * time.Second)
	for i, w := range ws {
		for {
			var st struct{ Shards []shardLine }
			_, err := getJSON(w.api, "/v1/status?local=true", &st)
			if err == nil && len(st.Shards) == 1 && st.Shards[0].AppliedSeq >= seq {
				if exact && st.Shards[0].AppliedSeq != seq {
					t.Fatalf("worker %d applied up to %d, beyond the %d events of the log", i, st.Shards[0].AppliedSeq, seq)
				}
				break
			}
			select {
			case <-w.done:
				t.Fatalf("worker %d exited:\n%s", i, w.output())
			default:
			}
			if time.Now().After(deadline) {
				var all []string
				for _, x := range ws {
					var full json.RawMessage
					getJSON(x.api, "/v1/status?local=true", &full)
					all = append(all, string(full))
				}
				t.Fatalf("worker %d: applied %+v (%v), want %d; statuses:\n%s", i, st.Shards, err, seq, strings.Join(all, "\n"))
			}
			time.Sleep(50 * time.Millisecond)
		}
	}
}

// writeLog writes events as a CSV edge log (ts, op, src, dst, id) in the
// given order.
func writeLog(t *testing.T, path string, events []stream.Event) {
	t.Helper()
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	w := csv.NewWriter(f)
	w.Write([]string{"ts", "op", "src", "dst", "id"})
	for _, e := range events {
		w.Write([]string{e.TS.Format(time.RFC3339Nano), e.Op.String(), e.Src, e.Dst, e.ID})
	}
	w.Flush()
	if err := errors.Join(w.Error(), f.Close()); err != nil {
		t.Fatal(err)
	}
}

// replayMatrix runs `orbitwatch replay` over the log and returns its final
// orbit matrix by node.
func replayMatrix(t *testing.T, log string) map[string][]uint64 {
	t.Helper()
	out := t.TempDir()
	cmd := exec.Command(buildBinary(t, "./cmd/orbitwatch", "orbitwatch"), "replay", "--input", log, "--out", out, "--checkpoint-every", "1000000000")
	if b, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("replay: %v\n%s", err, b)
	}
	files, _ := filepath.Glob(filepath.Join(out, "*.csv"))
	if len(files) != 1 {
		t.Fatalf("replay wrote %v, want one final matrix", files)
	}
	f, err := os.Open(files[0])
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	recs, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	rows := map[string][]uint64{}
	for i, rec := range recs[1:] {
		v := make([]uint64, len(rec)-1)
		for j, s := range rec[1:] {
			if v[j], err = strconv.ParseUint(s, 10, 64); err != nil {
				t.Fatalf("replay row %d: %v", i+2, err)
			}
		}
		rows[rec[0]] = v
	}
	return rows
}

// checkAgainstReplay reads every node of the replay's matrix from each
// worker's API (every worker answers every node, from its own state) and
// demands replay's vector at the last applied position.
func checkAgainstReplay(t *testing.T, ws []*worker, want map[string][]uint64, seq uint64) {
	t.Helper()
	nodes := slices.Sorted(func(yield func(string) bool) {
		for k := range want {
			if !yield(k) {
				return
			}
		}
	})
	var mu sync.Mutex
	var wg sync.WaitGroup
	var bad []string
	for i, w := range ws {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for _, node := range nodes {
				var b struct {
					Seq    uint64   `json:"seq"`
					Orbits []uint64 `json:"orbits"`
					Error  string   `json:"error"`
				}
				code, err := getJSON(w.api, "/v1/nodes/"+url.PathEscape(node), &b)
				if err != nil || code != http.StatusOK || b.Seq != seq || !slices.Equal(b.Orbits, want[node]) {
					mu.Lock()
					bad = append(bad, fmt.Sprintf("worker %d, node %q: %d %v seq %d %v %s; replay %v", i, node, code, err, b.Seq, b.Orbits, b.Error, want[node]))
					mu.Unlock()
				}
			}
		}()
	}
	wg.Wait()
	if len(bad) > 0 {
		t.Fatalf("%d reads differ from replay, e.g.\n%s", len(bad), strings.Join(bad[:min(5, len(bad))], "\n"))
	}
	var e struct{ Error string }
	if code, _ := getJSON(ws[0].api, "/v1/nodes/"+url.PathEscape("acct-never-seen"), &e); code != http.StatusNotFound || e.Error == "" {
		t.Errorf("unknown node: %d %q, want 404 with an error", code, e.Error)
	}
}
