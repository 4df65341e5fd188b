package main

import (
	"encoding/json"
	"fmt"
	"io"
	"net/http"
	"net/http/httptest"
	"net/url"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"slices"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/nats-io/nats.go"

	"orbitwatch/bench"
	"orbitwatch/bench/demo"
	"orbitwatch/delta"
	"orbitwatch/shard"
)

// alertReply is the part of an alert the tests read.
type alertReply struct {
	ID        string    `json:"id"`
	Rule      string    `json:"rule"`
	Node      string    `json:"node"`
	Seq       uint64    `json:"seq"`
	EventTime time.Time `json:"event_time"`
}

func getJSON(t *testing.T, u string, into any) int {
	t.Helper()
	resp, err := http.Get(u)
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	if resp.StatusCode == http.StatusOK {
		if err := json.NewDecoder(resp.Body).Decode(into); err != nil {
			t.Fatalf("%s: %v", u, err)
		}
	}
	return resp.StatusCode
}

// startDemo starts `orbitwatch demo --small` on random ports with its
// data in data and extra flags.
func startDemo(t *testing.T, data string, extra ...string) *child {
	t.Helper()
	args := append([]string{"demo", "--small", "--rate", "1000", "--http", "127.0.0.1:0", "--data", data}, extra...)
	return startChild(t, args...)
}

// waitStory waits until every event of sc is applied and cut, and returns
// the API's base URL.
func waitStory(t *testing.T, c *child, sc *demo.Scenario) string {
	t.Helper()
	base := c.waitFor(t, "HTTP API ")
	c.waitFor(t, "story complete")
	deadline := time.Now().Add(60 * time.Second)
	for {
		// Every event applied, and the last cut the story makes on its own
		// (a cut falls when a later event crosses a minute of event time)
		// durable with its alerts.
		st, err := localStatus(t, base)
		if err == nil && st.Applied == uint64(len(sc.Events)) && st.CommittedSeq == st.CutSeq && st.CutSeq > 0 {
			return base
		}
		if time.Now().After(deadline) {
			t.Fatalf("status %+v (%v), want %d applied and the last cut committed:\n%s", st, err, len(sc.Events), c.output())
		}
		time.Sleep(50 * time.Millisecond)
	}
}

// checkDemoAlerts demands from alerts (newest first) an alert of its rule
// on an expected node of every pattern meant for kind on up to k nodes,
// and none on a quiet pattern (the busiest shop, the biggest payroll
// provider).
func checkDemoAlerts(t *testing.T, sc *demo.Scenario, kind delta.Kind, k int, alerts []alertReply) {
	t.Helper()
	for i := 1; i < len(alerts); i++ {
		if alerts[i].Seq > alerts[i-1].Seq {
			t.Fatalf("alerts not newest first: seq %d after %d", alerts[i].Seq, alerts[i-1].Seq)
		}
	}
	for _, p := range sc.Expected(kind, k) {
		var on []alertReply
		for _, a := range alerts {
			if slices.Contains(p.Nodes, a.Node) {
				on = append(on, a)
			}
		}
		if p.Quiet {
			if len(on) != 0 {
				t.Errorf("%v: quiet %s %v: alerts %+v", kind, p.Name, p.Nodes, on)
			}
			continue
		}
		rule, _ := p.FoundWith(kind, k)
		if !slices.ContainsFunc(on, func(a alertReply) bool { return a.Rule == rule && slices.Contains(p.Expect, a.Node) }) {
			t.Errorf("%v: %s: no %s alert on %v (alerts on its nodes: %+v)", kind, p.Name, rule, p.Expect, on)
		}
	}
}

// demoNATS connects to the NATS server of a demo with its data in data,
// with the key the demo made there.
func demoNATS(t *testing.T, c *child, data string) *nats.Conn {
	t.Helper()
	opt, err := nats.NkeyOptionFromSeed(filepath.Join(data, natsKeyFile))
	if err != nil {
		t.Fatal(err)
	}
	nc, err := nats.Connect(c.waitFor(t, "NATS "), opt)
	if err != nil {
		t.Fatal(err)
	}
	return nc
}

// TestDemoAlertsEndToEnd plays the small demo story through the real
// binary (embedded NATS server, one worker, Badger) with the default
// kind, directed on 2–3 nodes, and demands from /v1/alerts an alert of
// its rule on an expected node of every pattern meant for that kind and
// none on the quiet hub and payroll provider; every alert also reaches the
// bus subject and a webhook that refuses its first two requests. The
// embedded server refuses a client without the demo's key. It checks the
// history and neighbours endpoints against the node read and the
// scenario.
func TestDemoAlertsEndToEnd(t *testing.T) {
	sc := demo.Generate(demo.SmallConfig())

	var mu sync.Mutex
	var hooked []string
	calls := 0
	hook := httptest.NewServer(http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		mu.Lock()
		defer mu.Unlock()
		calls++
		if calls <= 2 {
			http.Error(w, "not yet", http.StatusServiceUnavailable)
			return
		}
		var a alertReply
		body, _ := io.ReadAll(r.Body)
		if err := json.Unmarshal(body, &a); err != nil || a.ID == "" || r.Header.Get("Orbitwatch-Alert-Id") != a.ID {
			http.Error(w, "bad alert", http.StatusBadRequest)
			return
		}
		hooked = append(hooked, a.ID)
	}))
	defer hook.Close()

	data := filepath.Join(t.TempDir(), "demo")
	c := startDemo(t, data, "--webhook", hook.URL)
	if open, err := nats.Connect(c.waitFor(t, "NATS ")); err == nil {
		open.Close()
		t.Fatal("the demo's NATS server admitted a client without its key")
	}
	nc := demoNATS(t, c, data)
	defer nc.Close()
	var busMu sync.Mutex
	var onBus []string
	sub, err := nc.Subscribe(shard.AlertsSubject(shard.DefaultSubject), func(m *nats.Msg) {
		var a alertReply
		if json.Unmarshal(m.Data, &a) == nil {
			busMu.Lock()
			onBus = append(onBus, a.ID)
			busMu.Unlock()
		}
	})
	if err != nil {
		t.Fatal(err)
	}
	defer sub.Unsubscribe()
	base := waitStory(t, c, sc)

	var got struct{ Alerts []alertReply }
	if code := getJSON(t, base+"/v1/alerts?limit=1000", &got); code != http.StatusOK || len(got.Alerts) == 0 {
		t.Fatalf("/v1/alerts: status %d, %d alerts", code, len(got.Alerts))
	}
	checkDemoAlerts(t, sc, delta.Directed, 3, got.Alerts)
	// Filters: by node and by rule, and since a cut.
	mule := sc.Pattern("fan-out").Expect[0]
	var byNode struct{ Alerts []alertReply }
	getJSON(t, base+"/v1/alerts?node="+url.QueryEscape(mule), &byNode)
	if len(byNode.Alerts) == 0 || slices.ContainsFunc(byNode.Alerts, func(a alertReply) bool { return a.Node != mule }) {
		t.Fatalf("alerts of node %s: %+v", mule, byNode.Alerts)
	}
	var byRule struct{ Alerts []alertReply }
	getJSON(t, base+"/v1/alerts?rule=round-trip", &byRule)
	if len(byRule.Alerts) == 0 || slices.ContainsFunc(byRule.Alerts, func(a alertReply) bool { return a.Rule != "round-trip" }) {
		t.Fatalf("alerts of rule round-trip: %+v", byRule.Alerts)
	}
	last := got.Alerts[0].Seq
	var since struct{ Alerts []alertReply }
	getJSON(t, fmt.Sprintf("%s/v1/alerts?since=%d", base, last), &since)
	if len(since.Alerts) != 0 {
		t.Fatalf("alerts since the last alert's cut %d: %+v", last, since.Alerts)
	}
	if code := getJSON(t, base+"/v1/alerts?limit=0", &since); code != http.StatusBadRequest {
		t.Fatalf("limit=0: status %d, want 400", code)
	}

	// History: the last version is the node's vector as of the last cut
	// (events after it are in the read now but in no cut; a directed
	// vector also changes when a payee pays on, without a change of the
	// mule's own record).
	var hist struct {
		Versions []struct {
			Seq    uint64   `json:"seq"`
			Orbits []uint64 `json:"orbits"`
		}
	}
	if code := getJSON(t, base+"/v1/nodes/"+mule+"/history", &hist); code != http.StatusOK || len(hist.Versions) < 2 {
		t.Fatalf("history of %s: status %d, %d versions", mule, code, len(hist.Versions))
	}
	var node nodeReply
	v := hist.Versions[len(hist.Versions)-1]
	getJSON(t, fmt.Sprintf("%s/v1/nodes/%s?seq=%d", base, mule, v.Seq), &node)
	if !slices.Equal(v.Orbits, node.Orbits) || node.Seq != v.Seq {
		t.Fatalf("last history version at %d: %v, node read as of it: %+v", v.Seq, v.Orbits, node)
	}
	// Directed orbit 1 is "payer of a one-way arc": the mule's payees.
	if hist.Versions[0].Orbits[1] >= node.Orbits[1] {
		t.Fatalf("the mule's first version has %d payees, its last %d: want growth", hist.Versions[0].Orbits[1], node.Orbits[1])
	}
	if code := getJSON(t, base+"/v1/nodes/acct-nobody/history", &hist); code != http.StatusNotFound {
		t.Fatalf("history of an unknown node: status %d, want 404", code)
	}
	// Neighbours: the mule pays 1 + 3 + 30 households (bench/demo).
	var nb shard.Neighbors
	if code := getJSON(t, base+"/v1/nodes/"+mule+"/neighbors?limit=10", &nb); code != http.StatusOK || nb.Degree != 34 || len(nb.Neighbors) != 10 {
		t.Fatalf("neighbours of %s: status %d, %+v", mule, code, nb)
	}
	ring := sc.Pattern("ring")
	getJSON(t, base+"/v1/nodes/"+ring.Expect[0]+"/neighbors", &nb)
	if nb.Degree != 5 || len(nb.Edges) != 0 {
		t.Fatalf("ring sender %s: %+v, want 5 receivers with no edges among them", ring.Expect[0], nb)
	}
	cl := sc.Pattern("clique")
	getJSON(t, base+"/v1/nodes/"+cl.Nodes[0]+"/neighbors", &nb)
	if nb.Degree != 4 || len(nb.Edges) != 6 {
		t.Fatalf("clique member %s: %+v, want 4 neighbours with all 6 edges among them", cl.Nodes[0], nb)
	}

	// Bus and webhook: every stored alert, by id.
	ids := make([]string, len(got.Alerts))
	for i, a := range got.Alerts {
		ids[i] = a.ID
	}
	slices.Sort(ids)
	deadline := time.Now().Add(30 * time.Second)
	for {
		mu.Lock()
		h := slices.Sorted(slices.Values(hooked))
		n := calls
		mu.Unlock()
		if slices.Equal(h, ids) {
			if n < len(ids)+2 {
				t.Fatalf("%d webhook calls for %d alerts: the two refusals were not retried", n, len(ids))
			}
			break
		}
		if time.Now().After(deadline) {
			t.Fatalf("webhook got %d alerts in %d calls, the API lists %d", len(h), n, len(ids))
		}
		time.Sleep(50 * time.Millisecond)
	}
	busMu.Lock()
	for _, id := range onBus {
		if _, ok := slices.BinarySearch(ids, id); !ok {
			t.Errorf("alert %s on the bus is not in /v1/alerts", id)
		}
	}
	nBus := len(onBus)
	busMu.Unlock()
	if nBus == 0 {
		t.Errorf("no alert seen on %s", shard.AlertsSubject(shard.DefaultSubject))
	}
	c.stop(t)

	// Again on the same data: the story is republished under the same
	// event ids, so nothing new is stored; the worker restores its alert
	// state from the checkpoint and lists the same alerts, none twice. The
	// key made at the first start is used again.
	c = startDemo(t, data)
	base = waitStory(t, c, sc)
	var again struct{ Alerts []alertReply }
	getJSON(t, base+"/v1/alerts?limit=1000", &again)
	if !slices.Equal(again.Alerts, got.Alerts) {
		t.Fatalf("after a restart %d alerts, before %d", len(again.Alerts), len(got.Alerts))
	}
	c.stop(t)
}

// TestDemoOtherKinds plays the small story counted as an undirected and
// as a signed graph (the disputes reach the worker over the bus with their
// sign) and demands the patterns meant for each, and quiet quiet ones.
func TestDemoOtherKinds(t *testing.T) {
	sc := demo.Generate(demo.SmallConfig())
	for _, c := range []struct {
		kind delta.Kind
		k    int
	}{{delta.Undirected, 4}, {delta.Signed, 3}} {
		ch := startDemo(t, filepath.Join(t.TempDir(), "demo"), "--kind", c.kind.String())
		base := waitStory(t, ch, sc)
		var got struct{ Alerts []alertReply }
		if code := getJSON(t, base+"/v1/alerts?limit=1000", &got); code != http.StatusOK {
			t.Fatalf("%v: /v1/alerts: status %d", c.kind, code)
		}
		checkDemoAlerts(t, sc, c.kind, c.k, got.Alerts)
		ch.stop(t)
	}
	if out, code := run(t, "demo", "--kind", "undirected", "--max-nodes", "3"); code != 2 || !strings.Contains(out, "4 nodes") {
		t.Fatalf("demo --kind undirected --max-nodes 3: exit %d\n%s", code, out)
	}
}

// chromiumPath finds Debian's chromium; the test fails without it.
func chromiumPath(t *testing.T) string {
	t.Helper()
	p, err := bench.Chromium()
	if err != nil {
		t.Fatal(err)
	}
	return p
}

// headless runs chromium on u at 1280×800 with the given output flag.
func headless(t *testing.T, out string, u string) []byte {
	t.Helper()
	cmd := exec.Command(chromiumPath(t), "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
		"--disable-background-networking", "--disable-component-update", "--disable-sync", "--user-data-dir="+t.TempDir(),
		"--window-size=1280,800", "--virtual-time-budget=8000", out, u)
	var stdout, stderr strings.Builder
	cmd.Stdout, cmd.Stderr = &stdout, &stderr
	done := make(chan error, 1)
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	go func() { done <- cmd.Wait() }()
	select {
	case err := <-done:
		if err != nil {
			t.Fatalf("chromium %s: %v\n%s", out, err, stderr.String())
		}
	case <-time.After(90 * time.Second):
		cmd.Process.Kill()
		t.Fatalf("chromium %s did not finish:\n%s", out, stderr.String())
	}
	return []byte(stdout.String())
}

// TestDemoPage loads the web page of a played demo in headless Chromium
// with the mule named in the URL fragment and checks the dumped DOM: a
// bar per orbit in the signature chart, history series, the neighbourhood
// drawing, the node's alerts and the recent alerts, the shard status. It
// also takes a screenshot (kept at $ORBITWATCH_SCREENSHOT when set).
func TestDemoPage(t *testing.T) {
	sc := demo.Generate(demo.SmallConfig())
	c := startDemo(t, filepath.Join(t.TempDir(), "demo"))
	base := waitStory(t, c, sc)
	mule := sc.Pattern("fan-out").Expect[0]
	page := base + "/#node=" + url.QueryEscape(mule)
	dom := string(headless(t, "--dump-dom", page))
	count := func(re string) int { return len(regexp.MustCompile(re).FindAllStringIndex(dom, -1)) }
	checks := []struct {
		what string
		re   string
		min  int
	}{
		{"signature bars (33 directed orbits)", `<g class="orbit-bar" data-orbit="\d+">`, 33},
		{"bar rectangles", `<rect class="bar"`, 33},
		{"history series", `<path class="series" data-orbit="\d+"`, 1},
		{"neighbour dots (the page draws the busiest, at least 16 of the mule's 34)", `<circle class="nbr"`, 16},
		{"the node's alerts", `(?s)id="node-alert-list".*?<li class="alert" data-rule="fan-out"`, 1},
		{"recent alerts", `(?s)id="recent".*?<li class="alert"`, 1},
		{"shard status", `class="shard-status"`, 1},
		{"node title", `<h2 id="node-title">` + regexp.QuoteMeta(mule) + `</h2>`, 1},
	}
	for _, ch := range checks {
		if n := count(ch.re); n < ch.min {
			t.Errorf("%s: %d matches of %s, want ≥ %d", ch.what, n, ch.re, ch.min)
		}
	}
	if n := count(`<g class="orbit-bar"`); n != 33 {
		t.Errorf("%d signature bars, want one per orbit of the directed 2–3 catalog (33)", n)
	}
	if t.Failed() {
		t.Logf("DOM:\n%s", dom)
	}
	shot := filepath.Join(t.TempDir(), "page.png")
	if p := os.Getenv("ORBITWATCH_SCREENSHOT"); p != "" {
		shot = p
	}
	headless(t, "--screenshot="+shot, page)
	if fi, err := os.Stat(shot); err != nil || fi.Size() < 10000 {
		t.Fatalf("screenshot %s: %v", shot, err)
	}
	c.stop(t)
}

// TestServeAlertsFlag: serve refuses a rules file with a mistake, naming
// the file and the line, and exits with 1.
func TestServeAlertsFlag(t *testing.T) {
	dir := t.TempDir()
	bad := filepath.Join(dir, "rules.yaml")
	if err := os.WriteFile(bad, []byte("baseline: lookback\nrules:\n  - name: ring\n    kind: orbit-count\n    orbit: 5-cycle\n    fire: 8\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	out, code := run(t, "serve", "--data", filepath.Join(dir, "data"), "--nats-listen", "127.0.0.1:0", "--http", "127.0.0.1:0", "--alerts", bad)
	if code != 1 || !strings.Contains(out, "rules.yaml") || !strings.Contains(out, "line 5") {
		t.Fatalf("serve with a bad rules file: exit %d\n%s", code, out)
	}
}
