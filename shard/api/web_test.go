package api

import (
	"context"
	"encoding/json"
	"fmt"
	"hash/fnv"
	"io/fs"
	"net/http"
	"net/url"
	"path/filepath"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"testing"
	"time"

	"orbitwatch/delta"
	"orbitwatch/shard"
	"orbitwatch/shard/alert"
	"orbitwatch/stream"
)

// TestWebPage checks that the page and its files are served from the
// binary and that none of them reaches outside it (the machines are
// offline): no http(s) URL but the SVG namespace name. The page's look and
// behaviour are checked in headless Chromium by the command's tests.
func TestWebPage(t *testing.T) {
	v, _ := buildView(t, tailedTriangle(), []uint64{5}, nil)
	h := New(v, Options{})
	for path, want := range map[string]string{"/": "text/html", "/ui/app.js": "javascript", "/ui/style.css": "text/css"} {
		code, hdr, body := get(t, h, path)
		if code != http.StatusOK || !strings.Contains(hdr.Get("Content-Type"), want) || len(body) == 0 {
			t.Fatalf("GET %s: %d %q, %d bytes", path, code, hdr.Get("Content-Type"), len(body))
		}
	}
	_, _, page := get(t, h, "/")
	for _, s := range []string{`<label for="node-id">`, `src="/ui/app.js"`, `href="/ui/style.css"`, `id="recent"`, `id="token-form" hidden`} {
		if !strings.Contains(string(page), s) {
			t.Errorf("page lacks %s", s)
		}
	}
	// Inline scripts and styles would be refused by the guard's
	// Content-Security-Policy (default-src 'self').
	if regexp.MustCompile(`<script>|<style|\sstyle="|\son[a-z]+="`).Match(page) {
		t.Errorf("page has inline script or style, which the Content-Security-Policy refuses")
	}
	url := regexp.MustCompile(`https?://[^"'\s)]+`)
	fs.WalkDir(webFiles, "web", func(p string, d fs.DirEntry, err error) error {
		if err != nil || d.IsDir() {
			return err
		}
		b, _ := webFiles.ReadFile(p)
		for _, u := range url.FindAllString(string(b), -1) {
			if u != "http://www.w3.org/2000/svg" {
				t.Errorf("%s refers to %s", p, u)
			}
		}
		return nil
	})
	if code, _, _ := get(t, h, "/ui/missing.js"); code != http.StatusNotFound {
		t.Fatalf("missing asset: %d", code)
	}
}

// pageAlerts are alerts as the evaluator makes them, two at each cut: a
// fan-out on a shop and a ring on an account, with the orbits that moved.
func pageAlerts(cuts []uint64) map[uint64][]alert.Alert {
	out := map[uint64][]alert.Alert{}
	for i, seq := range cuts {
		at := apiT0.Add(time.Duration(seq-1) * time.Minute)
		for _, a := range []struct{ rule, node string }{{"fan-out", fmt.Sprintf("shop-%02d", i%8)}, {"ring", fmt.Sprintf("acct-%03d", 3*i)}} {
			out[seq] = append(out[seq], alert.Alert{ID: alert.AlertID(a.rule, a.node, seq), Rule: a.rule, Kind: "orbit-growth", Node: a.node, Seq: seq,
				EventTime: at, Score: 9.5, Fire: 8, Baseline: "lookback", Degree: 12,
				Orbits: []alert.OrbitMove{{Orbit: 7, Name: "centre of 3-star", Graphlet: "3-star", Before: 12, After: 140}}})
		}
	}
	return out
}

// pageLog is paymentsLog for kind: the same pairs, arcs from payer to
// payee in the directed kind, and in the signed kind a sixth of the pairs
// disputed (negative) in every add and remove.
func pageLog(kind delta.Kind) []stream.Event {
	log := paymentsLog(5, 800)
	if kind == delta.Signed {
		for i := range log {
			h := fnv.New32a()
			h.Write([]byte(min(log[i].Src, log[i].Dst) + "|" + max(log[i].Src, log[i].Dst)))
			log[i].Neg = h.Sum32()%6 == 0
		}
	}
	return log
}

var pageCuts = []uint64{100, 200, 300, 400, 500, 600, 700, 800}

// servePage serves the API and page of a view of pageLog for kind, 2–4
// nodes, on loopback behind the guard (with tokens from tokensFile when
// tokens is set, else open), and returns the view and the base URL.
func servePage(t *testing.T, kind delta.Kind, tokens bool) (*applierView, string) {
	t.Helper()
	c, err := shard.NewCounting(kind, 4)
	if kind == delta.Directed {
		c, err = shard.NewCounting(kind, 3)
	}
	if err != nil {
		t.Fatal(err)
	}
	v, _ := buildViewOf(t, c, pageLog(kind), pageCuts, pageAlerts(pageCuts))
	cfg := ServerConfig{Addr: "127.0.0.1:0"}
	if tokens {
		cfg.TokensFile = tokensFile(t)
	}
	s := serve(t, cfg, New(v, Options{Rules: []string{"fan-out", "ring"}}))
	return v, s.URL()
}

// apiGet reads base+path as JSON into out with token (none when "").
func apiGet(t *testing.T, base, path, token string, out any) {
	t.Helper()
	code, body := do(t, http.DefaultClient, base, call{path: path, token: token})
	if code != http.StatusOK {
		t.Fatalf("GET %s: %d %s", path, code, body)
	}
	if err := json.Unmarshal([]byte(body), out); err != nil {
		t.Fatal(err)
	}
}

// barCounts reads the signature chart: orbit id → the count its bar's
// tooltip gives.
const barCounts = `Object.fromEntries([...document.querySelectorAll("#sig-chart g.orbit-bar")].map((g) => [g.dataset.orbit, Number(g.querySelector("rect title").textContent.split(": ").pop())]))`

func checkBars(t *testing.T, b *browser, what string, want []uint64) {
	t.Helper()
	var got map[string]uint64
	b.eval(barCounts, &got)
	if len(got) != len(want) {
		t.Fatalf("%s: %d bars, want %d", what, len(got), len(want))
	}
	for o, c := range want {
		if got[fmt.Sprint(o)] != c {
			t.Fatalf("%s: orbit %d drawn as %d, the API says %d", what, o, got[fmt.Sprint(o)], c)
		}
	}
}

// TestPageAccount drives the page in headless Chromium as an
// investigator would, at 1280×800: the empty state says what to do; an
// id typed with the keyboard opens the account; its two-hop drawing
// holds the API's nodes and ties; a click on a neighbour opens that one;
// the as-of picker redraws the signature, the neighbourhood and the
// alerts as of that time; an unknown account and a time before the first
// cut say what went wrong and what to try; an alert's link opens its
// account as of the alert's cut. Screenshots go to
// $ORBITWATCH_SCREENSHOTS when set.
func TestPageAccount(t *testing.T) {
	_, base := servePage(t, delta.Undirected, false)
	b := newBrowser(t)

	b.open(base + "/")
	b.waitFor(`!document.getElementById("empty").hidden && document.querySelectorAll("#recent li.alert").length > 0`)
	if txt := b.str(`document.getElementById("empty").innerText`); !strings.Contains(txt, "Enter an account id") {
		t.Errorf("empty state: %q", txt)
	}
	if w := b.num(`document.documentElement.scrollWidth`); w > 1280 {
		t.Errorf("the page is %v px wide at 1280×800", w)
	}
	b.screenshot("page-empty", false)

	// The keyboard alone: Tab to the id box, type, Enter.
	for range 5 {
		if b.str(`document.activeElement.id`) == "node-id" {
			break
		}
		b.key("Tab")
	}
	if id := b.str(`document.activeElement.id`); id != "node-id" {
		t.Fatalf("Tab from the top reaches %q, not the account box", id)
	}
	b.typeText("shop-01")
	b.key("Enter")
	b.waitFor(`document.getElementById("node-title").textContent === "shop-01" && document.querySelectorAll("#nb-chart circle.nbr").length > 0 && document.querySelectorAll("#hist-chart path.series").length > 0`)
	var now NodeVector
	apiGet(t, base, "/v1/nodes/shop-01", "", &now)
	checkBars(t, b, "shop-01 now", now.Orbits)

	// The two-hop drawing is the API's.
	var nb shard.Neighbors
	apiGet(t, base, "/v1/nodes/shop-01/neighbors?limit=16&far=3", "", &nb)
	hops := map[int]int{}
	for _, n := range nb.Nodes {
		hops[n.Hop]++
	}
	if hops[2] == 0 || hops[1] != min(16, nb.Degree) {
		t.Fatalf("fixture: shop-01 has %v nodes by hop, degree %d", hops, nb.Degree)
	}
	if got := b.num(`document.querySelectorAll("#nb-chart circle.nbr").length`); int(got) != hops[1] {
		t.Errorf("%v counterparties drawn, the API gives %d", got, hops[1])
	}
	if got := b.num(`document.querySelectorAll("#nb-chart circle.far").length`); int(got) != hops[2] {
		t.Errorf("%v second-hop accounts drawn, the API gives %d", got, hops[2])
	}
	if got := b.num(`document.querySelectorAll("#nb-chart line.edge").length`); int(got) != len(nb.Ties) {
		t.Errorf("%v ties drawn, the API gives %d", got, len(nb.Ties))
	}
	if got := b.str(`document.getElementById("nb-cap").textContent`); !strings.Contains(got, fmt.Sprint(nb.Degree)) {
		t.Errorf("neighbourhood caption %q does not give the degree %d", got, nb.Degree)
	}
	if hidden := nb.Nodes[0].Hidden; hidden > 0 {
		if got := b.str(`document.getElementById("nb-note").textContent`); !strings.Contains(got, fmt.Sprintf("%d more counterparties", hidden)) {
			t.Errorf("summary %q does not say that %d are not drawn", got, hidden)
		}
	}
	b.screenshot("page-two-hop", true)
	// A click on the first neighbour opens it.
	first := nb.Neighbors[0]
	b.click(`#nb-chart a.nbr-link[data-hop="1"] circle`)
	b.waitFor(fmt.Sprintf(`document.getElementById("node-title").textContent === %q && document.getElementById("node-meta").textContent.startsWith("Now")`, first))
	var nv NodeVector
	apiGet(t, base, "/v1/nodes/"+first, "", &nv)
	checkBars(t, b, first+" after a click", nv.Orbits)
	// The drawing's accounts are links in the tab order: Enter on one
	// opens it too.
	b.waitFor(`document.querySelectorAll('#nb-chart a.nbr-link[data-hop="1"]').length > 1`)
	next := b.str(`(() => { const a = document.querySelectorAll('#nb-chart a.nbr-link[data-hop="1"]')[1]; a.focus(); return document.activeElement === a && a.tabIndex >= 0 ? a.getAttribute("href") : ""; })()`)
	if next == "" {
		t.Fatal("a neighbour in the drawing takes no keyboard focus")
	}
	b.key("Enter")
	b.waitFor(fmt.Sprintf(`location.hash === %q && document.getElementById("node-meta").textContent.startsWith("Now")`, next))

	// As of 12:00 on the first day.
	const at = "2026-03-01T12:00:00Z"
	var then NodeVector
	apiGet(t, base, "/v1/nodes/shop-01?at="+at, "", &then)
	if slices.Equal(then.Orbits, now.Orbits) {
		t.Fatal("fixture: shop-01 as of 12:00 equals now; the as-of check would be empty")
	}
	b.open(base + "/#node=shop-01")
	b.waitFor(`document.querySelectorAll("#sig-chart g.orbit-bar").length === 15`)
	b.eval(`document.getElementById("asof").value = "2026-03-01T12:00:00"`, nil)
	b.click(`#asof-form button[type=submit]`)
	b.waitFor(`location.hash.includes("at=") && document.getElementById("node-meta").textContent.startsWith("As of cut")`)
	checkBars(t, b, "shop-01 as of 12:00", then.Orbits)
	var nbThen shard.Neighbors
	apiGet(t, base, "/v1/nodes/shop-01/neighbors?limit=16&far=3&at="+at, "", &nbThen)
	b.waitFor(fmt.Sprintf(`document.getElementById("nb-cap").textContent.startsWith("Counterparties: %d") && document.querySelectorAll("#nb-chart circle.nbr").length === %d`, nbThen.Degree, min(16, nbThen.Degree)))
	b.waitFor(`document.getElementById("recent-note").textContent.startsWith("Alerts raised up to")`)
	var times []string
	b.eval(`[...document.querySelectorAll("#recent li.alert .node-link")].map((a) => a.getAttribute("href"))`, &times)
	if len(times) == 0 {
		t.Fatal("no alert listed as of 12:00")
	}
	for _, h := range times {
		seq, _ := strconv.Atoi(h[strings.LastIndex(h, "=")+1:])
		if seq > int(then.Seq) {
			t.Errorf("alert at cut %d listed as of cut %d", seq, then.Seq)
		}
	}
	if v := b.str(`document.getElementById("asof").value`); !strings.HasPrefix(v, "2026-03-01T12:00") {
		t.Errorf("the picker shows %q", v)
	}
	b.screenshot("page-as-of", true)
	b.click(`#asof-now`)
	b.waitFor(`!location.hash.includes("at=") && document.getElementById("node-meta").textContent.startsWith("Now")`)
	checkBars(t, b, "shop-01 back to now", now.Orbits)

	// What to do when there is nothing to show.
	b.open(base + "/#node=nobody")
	b.waitFor(`!document.getElementById("empty").hidden && document.getElementById("empty").innerText.includes("No account")`)
	if txt := b.str(`document.getElementById("empty").innerText`); !strings.Contains(txt, "No account “nobody” in this data") || !strings.Contains(txt, "exactly") {
		t.Errorf("unknown account: %q", txt)
	}
	b.open(base + "/#node=shop-01&at=2026-02-01T00:00:00Z")
	b.waitFor(`!document.getElementById("empty").hidden && document.getElementById("empty").innerText.includes("Nothing was saved")`)
	if txt := b.str(`document.getElementById("empty").innerText`); !strings.Contains(txt, "later time") || !strings.Contains(txt, "2026-02-01 00:00 UTC") {
		t.Errorf("before the first cut: %q", txt)
	}
	b.screenshot("page-unknown", false)

	// An alert's link opens its account as of the alert's cut.
	b.open(base + "/")
	b.waitFor(`document.querySelectorAll("#recent li.alert").length > 0`)
	var al struct{ Node, Href string }
	b.eval(`(() => { const a = document.querySelector("#recent li.alert .node-link"); return {node: a.textContent, href: a.getAttribute("href")}; })()`, &al)
	seq := al.Href[strings.LastIndex(al.Href, "=")+1:]
	if !strings.HasPrefix(al.Href, "#node="+url.QueryEscape(al.Node)+"&seq=") {
		t.Fatalf("alert link %q", al.Href)
	}
	b.click(`#recent li.alert .node-link`)
	b.waitFor(fmt.Sprintf(`document.getElementById("node-title").textContent === %q && document.getElementById("node-meta").textContent.startsWith("As of cut %s,")`, al.Node, seq))
	var atAlert NodeVector
	apiGet(t, base, "/v1/nodes/"+url.PathEscape(al.Node)+"?seq="+seq, "", &atAlert)
	checkBars(t, b, al.Node+" as of the alert", atAlert.Orbits)
	if w := b.num(`document.documentElement.scrollWidth`); w > 1280 {
		t.Errorf("the page is %v px wide at 1280×800", w)
	}
}

// TestPageTriage: behind tokens the page asks for one; with an admin
// token a verdict and a note given on the page are stored (read back from
// the API) and shown on the alert; the review filter then lists it; with
// a read token the page says that a verdict needs an admin token.
func TestPageTriage(t *testing.T) {
	_, base := servePage(t, delta.Undirected, true)
	b := newBrowser(t)
	b.open(base + "/")
	b.waitFor(`!document.getElementById("token-form").hidden`)
	b.click("#token")
	b.typeText(adminToken)
	b.key("Enter")
	b.waitFor(`document.getElementById("token-form").hidden && document.querySelectorAll("#recent li.alert").length > 0`)

	id := b.str(`document.querySelector("#recent li.alert").dataset.id`)
	b.click(`#recent li.alert .review`)
	b.waitFor(`!document.querySelector("#recent li.alert .triage-form").hidden`)
	// The form takes the keyboard: the first verdict has the focus.
	if b.str(`document.activeElement.value`) != "confirmed" {
		t.Errorf("the review form opens with %q focused", b.str(`document.activeElement.value`))
	}
	b.key("Space")
	b.click(`#recent li.alert textarea`)
	b.typeText("mule account, case 4417")
	b.screenshot("page-review-form", false)
	b.click(`#recent li.alert .triage-form button[type=submit]`)
	b.waitFor(`document.querySelector("#recent li.alert .verdict") !== null`)
	var one struct {
		Alert struct {
			ID     string      `json:"id"`
			Triage *triageJSON `json:"triage"`
		}
	}
	apiGet(t, base, "/v1/alerts/"+id, readToken, &one)
	if tr := one.Alert.Triage; tr == nil || tr.Verdict != "confirmed" || tr.Note != "mule account, case 4417" || tr.By != "oncall" {
		t.Fatalf("verdict stored from the page: %+v", tr)
	}
	if got := b.str(`document.querySelector("#recent li.alert .triage").innerText`); !strings.Contains(got, "Confirmed by oncall") || !strings.Contains(got, "case 4417") {
		t.Errorf("the alert shows %q", got)
	}
	b.eval(`(() => { const s = document.getElementById("verdict-filter"); s.value = "confirmed"; s.dispatchEvent(new Event("change")); })()`, nil)
	b.waitFor(fmt.Sprintf(`document.querySelectorAll("#recent li.alert").length === 1 && document.querySelector("#recent li.alert").dataset.id === %q`, id))
	b.screenshot("page-triage", false)

	// A read token may look, not judge.
	b.eval(`sessionStorage.setItem("orbitwatch-token", `+strconv.Quote(readToken)+`)`, nil)
	b.open(base + "/")
	b.waitFor(`document.querySelectorAll("#recent li.alert").length > 0`)
	b.click(`#recent li.alert .review`)
	// The form opens on the click's event, which a loaded machine may
	// deliver after the next command: wait for it, as above.
	b.waitFor(`!document.querySelector("#recent li.alert .triage-form").hidden`)
	b.click(`#recent li.alert .triage-form label`)
	b.click(`#recent li.alert .triage-form button[type=submit]`)
	b.waitFor(`document.querySelector("#recent li.alert .msg").textContent.includes("admin token")`)
}

// TestPageSignedAndDirected: negative ties are drawn in their own colour
// and dash with a legend, and the signed signature is grouped by sign
// pattern; directed ties carry arrows, both ways for a two-way pair.
func TestPageSignedAndDirected(t *testing.T) {
	_, base := servePage(t, delta.Signed, false)
	b := newBrowser(t)
	b.open(base + "/#node=shop-01")
	b.waitFor(`document.querySelectorAll("#nb-chart circle.nbr").length > 0`)
	var nb shard.Neighbors
	apiGet(t, base, "/v1/nodes/shop-01/neighbors?limit=16&far=3", "", &nb)
	neg := 0
	for _, tie := range nb.Ties {
		if tie.Sign == "-" {
			neg++
		}
	}
	if neg == 0 {
		t.Fatal("fixture: no negative tie near shop-01")
	}
	if got := b.num(`document.querySelectorAll("#nb-chart line.edge.neg").length`); int(got) != neg {
		t.Errorf("%v negative ties drawn, the API gives %d", got, neg)
	}
	var style struct{ Stroke, Dash, Pos string }
	b.eval(`(() => { const s = getComputedStyle(document.querySelector("#nb-chart line.edge.neg")); const p = getComputedStyle(document.querySelector("#nb-chart line.edge.own:not(.neg)")); return {stroke: s.stroke, dash: s.strokeDasharray, pos: p.stroke}; })()`, &style)
	// Okabe & Ito's vermillion for negative ties, blue for positive.
	if style.Stroke != "rgb(213, 94, 0)" || style.Dash == "none" || style.Pos != "rgb(0, 114, 178)" {
		t.Errorf("tie styles %+v", style)
	}
	if got := b.str(`document.getElementById("nb-legend").innerText`); !strings.Contains(got, "negative tie") || !strings.Contains(got, "positive tie") {
		t.Errorf("signed legend %q", got)
	}
	// The catalog gives each orbit's sign pattern: orbit 1 ends a negative
	// tie, 14 is on an all-negative triangle, 9 on an all-positive one.
	var cat struct{ Orbits []orbitJSON }
	apiGet(t, base, "/v1/catalog", "", &cat)
	if o := cat.Orbits; o[1].NegativeTies != 1 || o[1].Ties != 1 || o[14].NegativeTies != 3 || o[9].NegativeTies != 0 || o[9].Ties != 3 {
		t.Errorf("signed catalog: %+v %+v %+v", o[1], o[9], o[14])
	}
	var groups []string
	b.eval(`[...document.querySelectorAll("#sig-chart text.group")].map((e) => e.textContent)`, &groups)
	if len(groups) < 2 || groups[0] != "no negative tie" || !slices.Contains(groups, "1 negative tie") {
		t.Errorf("signature groups %v", groups)
	}
	b.screenshot("page-signed", true)
	b.screenshotOf("#neighbourhood", "page-signed-neighbourhood")

	_, base = servePage(t, delta.Directed, false)
	b.open(base + "/#node=shop-01")
	b.waitFor(`document.querySelectorAll("#nb-chart circle.nbr").length > 0`)
	apiGet(t, base, "/v1/nodes/shop-01/neighbors?limit=16&far=3", "", &nb)
	both := 0
	// Every tie but the faint extra ties of second-hop accounts carries
	// its arrow.
	arrows, extra := 0, 0
	for _, tie := range nb.Ties {
		a, b := nb.Nodes[tie.A], nb.Nodes[tie.B]
		if (a.Hop == 2 || b.Hop == 2) && b.Via != tie.A && a.Via != tie.B {
			extra++
			continue
		}
		arrows++
		if tie.Dir == "both" {
			both++
		}
	}
	if extra == 0 || both == 0 {
		t.Fatalf("fixture: %d extra ties, %d two-way ties near shop-01", extra, both)
	}
	if got := b.num(`document.querySelectorAll("#nb-chart line.edge[marker-end]").length`); int(got) != arrows {
		t.Errorf("%v ties with an arrow, want %d of the API's %d", got, arrows, len(nb.Ties))
	}
	if got := b.num(`document.querySelectorAll("#nb-chart line.edge[marker-start]").length`); int(got) != both {
		t.Errorf("%v two-way ties drawn, the API gives %d", got, both)
	}
	// An arrow points from payer to payee: the first out-tie of the node
	// ends at the neighbour.
	for _, tie := range nb.Ties {
		if tie.A == 0 && tie.Dir != "both" {
			payee := nb.Nodes[tie.B].ID
			if tie.Dir == "in" {
				payee = "shop-01"
			}
			var end string
			b.eval(fmt.Sprintf(`document.querySelector('#nb-chart line.edge[data-a=%q], #nb-chart line.edge[data-b=%q]') && [...document.querySelectorAll("#nb-chart line.edge")].find((l) => (l.dataset.a === %q || l.dataset.b === %q) && (l.dataset.a === "shop-01" || l.dataset.b === "shop-01")).dataset.b`, nb.Nodes[tie.B].ID, nb.Nodes[tie.B].ID, nb.Nodes[tie.B].ID, nb.Nodes[tie.B].ID), &end)
			if end != payee {
				t.Errorf("the tie shop-01–%s (%s) points at %s", nb.Nodes[tie.B].ID, tie.Dir, end)
			}
			break
		}
	}
	b.screenshot("page-directed", true)
	b.screenshotOf("#neighbourhood", "page-directed-neighbourhood")
}

// TestPageOverWorker: the page over a real worker following a real
// JetStream log into a real Badger store lists the accounts with the
// nearest signatures as the API gives them, each a link that opens it,
// and draws the network's drift when its panel is opened.
func TestPageOverWorker(t *testing.T) {
	ctx, cancel := context.WithTimeout(context.Background(), 2*time.Minute)
	defer cancel()
	dir := t.TempDir()
	const name, subject = "PAGELOG", "pagelog.events"
	events := paymentsLog(7, 600)
	nc := publishLog(t, ctx, dir, name, subject, events)
	c := undirected4(t)
	st := openStore(t, c, filepath.Join(dir, "state"))
	w, err := shard.NewWorker(shard.WorkerConfig{Conn: nc, Stream: name, Subject: subject, Shard: 0, Shards: 1, Counting: c, Cuts: shard.Cuts{Every: time.Hour}, Store: st})
	if err != nil {
		t.Fatal(err)
	}
	h := New(w, Options{})
	wctx, wstop := context.WithCancel(ctx)
	done := make(chan error, 1)
	go func() { done <- w.Run(wctx) }()
	defer func() {
		wstop()
		if err := <-done; err != nil {
			t.Errorf("worker: %v", err)
		}
	}()
	for s := w.Status(); s.AppliedSeq < uint64(len(events)) || s.CommittedSeq < s.CutSeq; s = w.Status() {
		select {
		case err := <-done:
			t.Fatalf("worker stopped: %v", err)
		case <-ctx.Done():
			t.Fatalf("worker at %+v", s)
		case <-time.After(10 * time.Millisecond):
		}
	}
	base := serve(t, ServerConfig{Addr: "127.0.0.1:0"}, h).URL()

	var sim struct {
		Similar []struct {
			Node     string
			Distance float64
		}
	}
	apiGet(t, base, "/v1/nodes/acct-005/similar?k=8", "", &sim)
	if len(sim.Similar) == 0 {
		t.Fatal("fixture: no similar accounts for acct-005")
	}
	b := newBrowser(t)
	b.open(base + "/#node=acct-005")
	b.waitFor(`document.querySelectorAll("#similar-list li a").length > 0 && document.querySelectorAll("#nb-chart circle.nbr").length > 0`)
	var listed []string
	b.eval(`[...document.querySelectorAll("#similar-list li a")].map((a) => a.textContent)`, &listed)
	want := make([]string, len(sim.Similar))
	for i, s := range sim.Similar {
		want[i] = s.Node
	}
	if !slices.Equal(listed, want) {
		t.Errorf("similar accounts on the page %v, the API gives %v", listed, want)
	}
	b.click(`#drift summary`)
	b.waitFor(`document.querySelectorAll("#drift-chart path.series").length === 2 || document.querySelector("#drift-chart p:not(:empty)") && !document.querySelector("#drift-chart p").textContent.includes("computing")`)
	if n := b.num(`document.querySelectorAll("#drift-chart path.series").length`); n != 2 {
		t.Errorf("drift chart: %v series; the panel says %q", n, b.str(`document.getElementById("drift-chart").innerText`))
	}
	b.screenshot("page-worker", true)
	b.click(`#similar-list li a`)
	b.waitFor(fmt.Sprintf(`document.getElementById("node-title").textContent === %q && document.getElementById("node-meta").textContent.startsWith("Now")`, want[0]))
}
