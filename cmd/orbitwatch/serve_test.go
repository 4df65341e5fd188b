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
// `orbitwatch publish`, and demands from the HTTP API, once the log is
// applied, every node's vector of `replay` over the same log. Publishing
// the log again stores nothing and counts nothing twice; a clean stop
// leaves in the data directory the cuts of one applier over the log, and
// a restart on it goes on to the same answers.
func TestServeEndToEnd(t *testing.T) {
	dir := t.TempDir()
	log := filepath.Join(dir, "log.csv")
	writeLog(t, log, 4000, 31)
	want, applied := replayFinal(t, log)
	e := expect(t, pointers(published(t, log)))

	data := filepath.Join(dir, "data")
	start := func() (*child, string, string) {
		srv := startChild(t, "serve", "--data", data, "--nats-listen", "127.0.0.1:0", "--http", "127.0.0.1:0", "--cut-every", workerCuts)
		return srv, srv.waitFor(t, "NATS "), srv.waitFor(t, "HTTP API ")
	}
	srv, natsURL, base := start()
	stored, dups, last := publishCmd(t, "--nats", natsURL, "--nkey", filepath.Join(data, natsKeyFile), "--input", log)
	if stored == 0 || dups != 0 {
		t.Fatalf("first publish: %d stored, %d duplicates", stored, dups)
	}
	st := waitApplied(t, srv, base, last)
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

	// The same file again: every event is known and stored once.
	stored2, _, _ := publishCmd(t, "--nats", natsURL, "--nkey", filepath.Join(data, natsKeyFile), "--input", log)
	if stored2 != 0 {
		t.Fatalf("second publish stored %d", stored2)
	}
	time.Sleep(200 * time.Millisecond)
	if st = waitApplied(t, srv, base, last); st.Applied != applied {
		t.Fatalf("after a republish %d applied, want %d", st.Applied, applied)
	}
	checkAPI("API after republish")
	waitCommitted(t, srv, base, e.cuts[len(e.cuts)-1])
	srv.stop(t)
	checkStored(t, "data directory after stop", filepath.Join(data, "state"), e)

	// A restart reads the log on from its last cut.
	srv, _, base = start()
	waitApplied(t, srv, base, last)
	checkAPI("API after a restart")
	srv.stop(t)
}
