package main

import (
	"encoding/json"
	"net/http"
	"net/url"
	"path/filepath"
	"regexp"
	"strconv"
	"testing"
	"time"
)

// nodeReply is the API's node JSON as far as the tests read it.
type nodeReply struct {
	Node   string   `json:"node"`
	Seq    uint64   `json:"seq"`
	Orbits []uint64 `json:"orbits"`
}

func getNode(t *testing.T, base, id string) (nodeReply, int) {
	t.Helper()
	resp, err := http.Get(base + "/v1/nodes/" + url.PathEscape(id))
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	var r nodeReply
	if resp.StatusCode == http.StatusOK {
		if err := json.NewDecoder(resp.Body).Decode(&r); err != nil {
			t.Fatal(err)
		}
	}
	return r, resp.StatusCode
}

var publishSummary = regexp.MustCompile(`(\d+) events read, (\d+) stored, (\d+) duplicates .* at seq (\d+)`)

// publishCmd runs `orbitwatch publish` and returns stored, duplicates and
// the stream's last acknowledged sequence.
func publishCmd(t *testing.T, args ...string) (stored, dups int, last uint64) {
	t.Helper()
	out, code := run(t, append([]string{"publish"}, args...)...)
	if code != 0 {
		t.Fatalf("publish: exit %d\n%s", code, out)
	}
	m := publishSummary.FindStringSubmatch(out)
	if m == nil {
		t.Fatalf("publish summary not found:\n%s", out)
	}
	stored, _ = strconv.Atoi(m[2])
	dups, _ = strconv.Atoi(m[3])
	last, _ = strconv.ParseUint(m[4], 10, 64)
	return stored, dups, last
}

// TestServeEndToEnd runs `orbitwatch serve`, publishes an edge log with
// `orbitwatch publish`, and demands from the HTTP API, once the cut has
// reached the log's end, every node's vector of `replay` over the same log.
// Publishing the log again stores nothing and counts nothing twice; a clean
// stop leaves the same vectors in the data directory.
func TestServeEndToEnd(t *testing.T) {
	dir := t.TempDir()
	log := filepath.Join(dir, "log.csv")
	writeLog(t, log, 4000, 31)
	want, applied := replayFinal(t, log)

	data := filepath.Join(dir, "data")
	srv := startChild(t, "serve", "--data", data, "--nats-listen", "127.0.0.1:0", "--http", "127.0.0.1:0", "--batch", "256")
	natsURL := srv.waitFor(t, "NATS ")
	base := srv.waitFor(t, "HTTP API ")

	stored, dups, last := publishCmd(t, "--nats", natsURL, "--input", log)
	if stored == 0 || dups != 0 {
		t.Fatalf("first publish: %d stored, %d duplicates", stored, dups)
	}
	st := waitCut(t, srv, base, last)
	if st.Applied != applied || !st.Ready {
		t.Fatalf("status %+v: want %d applied, ready", st, applied)
	}
	checkAPI := func(what string) {
		for id, w := range want {
			r, code := getNode(t, base, id)
			if code != http.StatusOK || r.Node != id || r.Seq < last {
				t.Fatalf("%s: node %q: status %d, %+v", what, id, code, r)
			}
			sameVectors(t, what+" "+id, map[string][]uint64{id: r.Orbits}, map[string][]uint64{id: w})
		}
	}
	checkAPI("API vs replay")
	if _, code := getNode(t, base, "acct-never-seen"); code != http.StatusNotFound {
		t.Fatalf("unknown node: status %d, want 404", code)
	}

	// The same file again: every event is a duplicate by its derived id.
	stored2, dups2, _ := publishCmd(t, "--nats", natsURL, "--input", log)
	if stored2 != 0 || dups2 != stored {
		t.Fatalf("second publish: %d stored, %d duplicates; want 0 and %d", stored2, dups2, stored)
	}
	st = waitCut(t, srv, base, last)
	if st.Applied != applied {
		t.Fatalf("after a republish %d applied, want %d", st.Applied, applied)
	}
	checkAPI("API after republish")

	srv.stop(t)
	stored3, _ := loadVectors(t, filepath.Join(data, "state"))
	sameVectors(t, "data directory after stop vs replay", stored3, want)
}

// TestServeStopCutsWhatItRead: with batches too long to end and no idle or
// delay cuts, a stopped serve still commits every event it has read, so
// its data directory equals replay's.
func TestServeStopCutsWhatItRead(t *testing.T) {
	dir := t.TempDir()
	log := filepath.Join(dir, "log.csv")
	writeLog(t, log, 1500, 33)
	want, _ := replayFinal(t, log)
	data := filepath.Join(dir, "data")
	srv := startChild(t, "serve", "--data", data, "--nats-listen", "127.0.0.1:0", "--http", "127.0.0.1:0",
		"--batch", "1000000", "--idle", "1h", "--max-delay", "-1s")
	natsURL := srv.waitFor(t, "NATS ")
	base := srv.waitFor(t, "HTTP API ")
	_, _, last := publishCmd(t, "--nats", natsURL, "--input", log)
	deadline := time.Now().Add(30 * time.Second)
	for {
		st, err := localStatus(t, base)
		if err == nil && st.AppliedSeq >= last {
			if st.CutSeq != 0 {
				t.Fatalf("a cut at %d before the stop: the test cannot tell a final cut", st.CutSeq)
			}
			break
		}
		if time.Now().After(deadline) {
			t.Fatalf("serve read to %d (%v), want %d", st.AppliedSeq, err, last)
		}
		time.Sleep(20 * time.Millisecond)
	}
	srv.stop(t)
	got, state := loadVectors(t, filepath.Join(data, "state"))
	if state.Seq != last {
		t.Fatalf("stopped at seq %d, want %d", state.Seq, last)
	}
	sameVectors(t, "data directory after a stop mid-batch vs replay", got, want)
}
