package main

import (
	"bufio"
	"encoding/json"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
	"time"

	"orbitwatch/bench/demo"
	"orbitwatch/storage"
	"orbitwatch/stream"
)

// demoLog writes the small demo scenario (our own fictional payments with
// planted patterns, seed seed) as a CSV event log split in parts files of
// about equal length, and returns the whole log's path, the parts' paths
// and the scenario.
func demoLog(t *testing.T, dir string, seed uint64, parts int) (string, []string, *demo.Scenario) {
	t.Helper()
	cfg := demo.SmallConfig()
	cfg.Seed = seed
	sc := demo.Generate(cfg)
	write := func(path string, evs []stream.Event) {
		f, err := os.Create(path)
		if err != nil {
			t.Fatal(err)
		}
		w := bufio.NewWriter(f)
		fmt.Fprintln(w, "ts,op,src,dst,sign")
		for _, e := range evs {
			op, sign := "add", "+"
			if e.Op == stream.OpRemove {
				op = "remove"
			}
			if e.Neg {
				sign = "-"
			}
			fmt.Fprintf(w, "%s,%s,%s,%s,%s\n", e.TS.UTC().Format(time.RFC3339Nano), op, e.Src, e.Dst, sign)
		}
		if err := w.Flush(); err != nil {
			t.Fatal(err)
		}
		f.Close()
	}
	whole := filepath.Join(dir, "demo.csv")
	write(whole, sc.Events)
	var paths []string
	for i := range parts {
		p := filepath.Join(dir, fmt.Sprintf("demo-part%d.csv", i+1))
		write(p, sc.Events[i*len(sc.Events)/parts:(i+1)*len(sc.Events)/parts])
		paths = append(paths, p)
	}
	return whole, paths, sc
}

// alertKey is what makes two alerts the same: the node, the rule, the
// cut (sequence and event time) and the score. The id is a function of
// the first three.
type alertKey struct {
	ID        string    `json:"id"`
	Node      string    `json:"node"`
	Rule      string    `json:"rule"`
	Seq       uint64    `json:"seq"`
	EventTime time.Time `json:"event_time"`
	Score     float64   `json:"score"`
}

// storedAlerts lists the alerts of a data directory with `orbitwatch
// alerts --json`.
func storedAlerts(t *testing.T, data string, args ...string) []alertKey {
	t.Helper()
	r := mustRunCmd(t, append([]string{"alerts", "--data", data, "--json"}, args...)...)
	var out []alertKey
	for _, line := range strings.Split(strings.TrimSpace(r.stdout), "\n") {
		if line == "" {
			continue
		}
		var a alertKey
		if err := json.Unmarshal([]byte(line), &a); err != nil || a.EventTime.IsZero() || a.ID == "" {
			t.Fatalf("alerts --json line %q: %v", line, err)
		}
		out = append(out, a)
	}
	return out
}

func sameAlerts(t *testing.T, what string, got, want []alertKey) {
	t.Helper()
	key := func(a alertKey) string { return fmt.Sprintf("%s %s %d", a.Rule, a.Node, a.Seq) }
	slices.SortFunc(got, func(a, b alertKey) int { return strings.Compare(key(a), key(b)) })
	slices.SortFunc(want, func(a, b alertKey) int { return strings.Compare(key(a), key(b)) })
	if !slices.Equal(got, want) {
		var miss, extra []string
		for _, a := range want {
			if !slices.Contains(got, a) {
				miss = append(miss, key(a))
			}
		}
		for _, a := range got {
			if !slices.Contains(want, a) {
				extra = append(extra, key(a))
			}
		}
		t.Fatalf("%s: %d alerts, want %d; missing %v, extra %v", what, len(got), len(want), miss, extra)
	}
}

// TestAlertsIgnoreArrival is the determinism test: one seeded demo
// scenario with planted patterns, under the demo's rules, gives the same
// stored history (cuts and orbit matrices) and the same alerts (node,
// rule, cut, event time, score) backfilled at once,
// backfilled in three parts, published at once to a worker, published in
// three parts with pauses, and published to a worker killed with SIGKILL
// and restarted three times on the way.
func TestAlertsIgnoreArrival(t *testing.T) {
	dir := t.TempDir()
	whole, parts, sc := demoLog(t, dir, 1, 3)
	// The demo's rules with a sweep of every node every ten minutes of
	// event time, which restarts must also keep in step.
	rules := filepath.Join(dir, "rules.yaml")
	if err := os.WriteFile(rules, append(slices.Clone(demo.AlertsYAML), "\nsweep: 10m\n"...), 0o644); err != nil {
		t.Fatal(err)
	}
	cutFlags := []string{"--cut-every", "1m", "--alerts", rules}

	once := filepath.Join(dir, "once")
	mustRunCmd(t, append([]string{"backfill", "--data", once, "--input", whole}, cutFlags...)...)
	want := storedAlerts(t, once)
	planted := 0
	for _, p := range sc.Patterns {
		if !p.Quiet && slices.ContainsFunc(want, func(a alertKey) bool { return slices.Contains(p.Expect, a.Node) }) {
			planted++
		}
	}
	if len(want) == 0 || planted == 0 {
		t.Fatalf("the backfill raised %d alerts, %d on planted patterns: the scenario does not exercise the test", len(want), planted)
	}
	t.Logf("%d events, %d alerts, %d planted patterns alerted", len(sc.Events), len(want), planted)

	// The demo's rules re-evaluated over the history of a backfill with
	// the built-in rules raise what a backfill with the demo's rules
	// raised, and store nothing.
	builtin := filepath.Join(dir, "builtin")
	mustRunCmd(t, "backfill", "--data", builtin, "--input", whole, "--cut-every", "1m")
	before := storedAlerts(t, builtin)
	re := mustRunCmd(t, "alerts", "--data", builtin, "--rules", rules, "--json")
	var reevaluated []alertKey
	for _, line := range strings.Split(strings.TrimSpace(re.stdout), "\n") {
		var a alertKey
		if err := json.Unmarshal([]byte(line), &a); err != nil {
			t.Fatalf("alerts --rules line %q: %v", line, err)
		}
		reevaluated = append(reevaluated, a)
	}
	sameAlerts(t, "the demo's rules re-evaluated over stored history", reevaluated, want)
	sameAlerts(t, "stored alerts after a re-evaluation", storedAlerts(t, builtin), before)
	checkLabels(t, once, sc, want)

	inParts := filepath.Join(dir, "parts")
	for i := range parts {
		args := []string{"backfill", "--data", inParts}
		for _, p := range parts[:i+1] {
			args = append(args, "--input", p)
		}
		mustRunCmd(t, append(args, cutFlags...)...)
	}
	sameAlerts(t, "backfill in three parts", storedAlerts(t, inParts), want)
	sameHistory(t, "backfill in three parts", inParts, once)

	srv := startEmbedded(t)
	run := func(name string, publish func(name string), kills int) {
		data := filepath.Join(dir, strings.ToLower(name))
		w, base := startWorker(t, srv.URL(), name, 0, 1, data, "--alerts", rules)
		done := make(chan struct{})
		go func() { publish(name); close(done) }()
		r := rand.New(rand.NewPCG(3, 3))
		midStream := 0
		for range kills {
			time.Sleep(time.Duration(300+r.IntN(400)) * time.Millisecond)
			w.kill()
			select {
			case <-done:
			default:
				midStream++
			}
			w, base = startWorker(t, srv.URL(), name, 0, 1, data, "--alerts", rules)
		}
		<-done
		if midStream < kills {
			t.Fatalf("%s: %d of %d kills landed while the log was being published", name, midStream, kills)
		}
		last := streamLast(t, srv.URL(), name)
		waitApplied(t, w, base, last)
		waitCommitted(t, w, base, want[len(want)-1].Seq)
		w.stop(t)
		sameAlerts(t, name, storedAlerts(t, data), want)
		sameHistory(t, name, data, once)
	}
	pub := func(name string, paths ...string) {
		for i, p := range paths {
			if i > 0 {
				time.Sleep(time.Second)
			}
			publishCmd(t, "--nats", srv.URL(), "--stream", name, "--subject", strings.ToLower(name)+".events", "--input", p)
		}
	}
	run("ONCE", func(name string) { pub(name, whole) }, 0)
	run("PARTS", func(name string) { pub(name, parts...) }, 0)
	// Paced, so that the kills land while the worker is behind.
	run("KILLED", func(name string) { publishFile(t, srv.URL(), name, whole, 1500) }, 3)
}

// checkLabels writes one case per planted pattern (its expected nodes,
// known when its last payment was made) and holds `alerts --labels` to
// the counts the test makes itself from the alert list: alerts per rule,
// alerts on case nodes, cases alerted and each case's delay.
func checkLabels(t *testing.T, data string, sc *demo.Scenario, alerts []alertKey) {
	t.Helper()
	cases := filepath.Join(t.TempDir(), "cases.csv")
	var b strings.Builder
	b.WriteString("case,node,known_at\n")
	caseOf := map[string][]string{}
	known := map[string]time.Time{}
	for _, p := range sc.Patterns {
		if p.Quiet || len(p.Expect) == 0 {
			continue
		}
		for _, n := range p.Expect {
			fmt.Fprintf(&b, "%s,%s,%s\n", p.Name, n, p.Complete.Format("2006-01-02 15:04:05"))
			caseOf[n] = append(caseOf[n], p.Name)
		}
		known[p.Name] = p.Complete.Truncate(time.Second)
	}
	b.WriteString("broken line without fields\n")
	if err := os.WriteFile(cases, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	r := mustRunCmd(t, "alerts", "--data", data, "--labels", cases, "--json")
	if !strings.Contains(r.stderr, "line "+fmt.Sprint(strings.Count(b.String(), "\n"))+" left out") {
		t.Errorf("the bad cases line was not reported with its number: %s", r.stderr)
	}
	var m struct {
		Cases int `json:"cases"`
		Rules []struct {
			Rule    string    `json:"rule"`
			Alerts  int       `json:"alerts"`
			OnCases int       `json:"alerts_on_cases"`
			Alerted int       `json:"cases_alerted"`
			Delays  []float64 `json:"delays_hours"`
		} `json:"rules"`
	}
	if err := json.Unmarshal([]byte(r.stdout), &m); err != nil {
		t.Fatalf("alerts --labels --json: %v\n%s", err, r.stdout)
	}
	if m.Cases != len(known) || len(m.Rules) == 0 || m.Rules[len(m.Rules)-1].Rule != "all" {
		t.Fatalf("measurement: %d cases (want %d), rules %+v", m.Cases, len(known), m.Rules)
	}
	for _, rm := range m.Rules {
		n, on := 0, 0
		first := map[string]time.Time{}
		for _, a := range alerts {
			if rm.Rule != "all" && a.Rule != rm.Rule {
				continue
			}
			n++
			if len(caseOf[a.Node]) > 0 {
				on++
			}
			for _, c := range caseOf[a.Node] {
				if f, ok := first[c]; !ok || a.EventTime.Before(f) {
					first[c] = a.EventTime
				}
			}
		}
		var delays []float64
		for c, f := range first {
			delays = append(delays, f.Sub(known[c]).Hours())
		}
		slices.Sort(delays)
		if rm.Alerts != n || rm.OnCases != on || rm.Alerted != len(first) || len(rm.Delays) != len(delays) {
			t.Fatalf("rule %s: %d alerts, %d on cases, %d cases alerted; the list gives %d, %d, %d", rm.Rule, rm.Alerts, rm.OnCases, rm.Alerted, n, on, len(first))
		}
		for i := range delays {
			if d := rm.Delays[i] - delays[i]; d > 1e-9 || d < -1e-9 {
				t.Fatalf("rule %s: delays %v, want %v", rm.Rule, rm.Delays, delays)
			}
		}
	}
	// An investigator confirms an alert on a node of no case; after the
	// store is closed and opened again (a restart) the verdict is there,
	// and with --confirmed it is one more case, alerted.
	var pick alertKey
	for _, a := range alerts {
		if len(caseOf[a.Node]) == 0 {
			pick = a
		}
	}
	if pick.ID == "" {
		t.Fatal("every alert is on a case node: nothing to confirm")
	}
	ro, err := storage.OpenReadOnly(data)
	if err != nil {
		t.Fatal(err)
	}
	set := ro.Settings()
	ro.Close()
	st, err := storage.Open(data, set)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := st.PutVerdict(storage.Verdict{AlertID: pick.ID, AlertSeq: pick.Seq, Verdict: storage.VerdictConfirmed, Note: "mule, case 17", By: "test", Role: "admin", At: time.Now()}); err != nil {
		t.Fatal(err)
	}
	st.Close()
	listed := mustRunCmd(t, "alerts", "--data", data, "--verdict", storage.VerdictConfirmed, "--json")
	if !strings.Contains(listed.stdout, pick.ID) || strings.Count(strings.TrimSpace(listed.stdout), "\n") != 0 || !strings.Contains(listed.stdout, `"mule, case 17"`) {
		t.Fatalf("alerts --verdict confirmed after a reopen:\n%s", listed.stdout)
	}
	with := mustRunCmd(t, "alerts", "--data", data, "--labels", cases, "--confirmed", "--json")
	var m2 struct {
		Cases int `json:"cases"`
		Rules []struct {
			Rule    string `json:"rule"`
			Alerted int    `json:"cases_alerted"`
		} `json:"rules"`
	}
	if err := json.Unmarshal([]byte(with.stdout), &m2); err != nil {
		t.Fatal(err)
	}
	all := m.Rules[len(m.Rules)-1]
	if all2 := m2.Rules[len(m2.Rules)-1]; m2.Cases != m.Cases+1 || all2.Alerted != all.Alerted+1 {
		t.Fatalf("with the confirmed verdict as a case: %d cases, %d alerted; before %d, %d", m2.Cases, all2.Alerted, m.Cases, all.Alerted)
	}

	table := mustRunCmd(t, "alerts", "--data", data, "--labels", cases)
	if !strings.Contains(table.stdout, "cases alerted") || !strings.Contains(table.stdout, "per 10k nodes/day") {
		t.Fatalf("the measurement table lacks its headings:\n%s", table.stdout)
	}
	t.Logf("measured against labels:\n%s", table.stdout)
}

// ruleCuts returns the cuts of the cut rules a data directory holds (not
// the flushes where an input ended).
func ruleCuts(t *testing.T, data string) []storage.CheckpointInfo {
	t.Helper()
	st, err := storage.OpenReadOnly(resolveData(data))
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	var out []storage.CheckpointInfo
	for _, c := range st.Checkpoints() {
		if !c.Flush {
			out = append(out, c)
		}
	}
	return out
}

// sameHistory holds the stored history of data to that of ref: the same
// cuts of the cut rules (sequence, event time, nodes), and at every
// 25th of them and the last the same orbit matrix, exported by
// `orbitwatch export`.
func sameHistory(t *testing.T, what, data, ref string) {
	t.Helper()
	got, want := ruleCuts(t, data), ruleCuts(t, ref)
	if len(got) != len(want) {
		t.Fatalf("%s: %d cuts stored, %d by the backfill at once", what, len(got), len(want))
	}
	for i := range want {
		if got[i].Seq != want[i].Seq || !got[i].Watermark.Equal(want[i].Watermark) || got[i].Nodes != want[i].Nodes {
			t.Fatalf("%s: cut %d is %+v, the backfill's %+v", what, i, got[i], want[i])
		}
		if i%25 != 0 && i != len(want)-1 {
			continue
		}
		seq := fmt.Sprint(want[i].Seq)
		a := mustRunCmd(t, "export", "--data", data, "--seq", seq, "--format", "csv", "--out", "-")
		b := mustRunCmd(t, "export", "--data", ref, "--seq", seq, "--format", "csv", "--out", "-")
		if a.stdout != b.stdout || strings.Count(a.stdout, "\n") < 2 {
			t.Fatalf("%s: the orbit matrix at cut %s differs from the backfill's (%d and %d bytes)", what, seq, len(a.stdout), len(b.stdout))
		}
	}
}
