package alert_test

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"
	"time"

	"orbitwatch/delta"
	"orbitwatch/shard"
	"orbitwatch/shard/alert"
	"orbitwatch/stream"
)

// market applies payments to a fresh applier, one second apart from t0,
// and fails the test on a rejected one.
type market struct {
	t  *testing.T
	ap *shard.Applier
	n  uint64
}

func newMarket(t *testing.T) *market {
	t.Helper()
	counting, err := shard.NewCounting(delta.Undirected, 4)
	if err != nil {
		t.Fatal(err)
	}
	return &market{t: t, ap: shard.NewApplier(counting, 0, shard.Cuts{})}
}

// vectors returns every node's current vector.
func (m *market) vectors() *delta.Vectors {
	m.t.Helper()
	v, err := m.ap.Vectors()
	if err != nil {
		m.t.Fatal(err)
	}
	return v
}

func (m *market) pay(src, dst string) {
	m.t.Helper()
	m.n++
	ev := stream.Event{Op: stream.OpAdd, Src: src, Dst: dst, TS: t0.Add(time.Duration(m.n) * time.Second), HasTS: true}
	if err := m.ap.Apply(m.n, ev); err != nil {
		m.t.Fatalf("payment %d %s→%s: %v", m.n, src, dst, err)
	}
}

// continuations counts, straight from the adjacency, every induced 2-path
// x–a–y of x (y not adjacent to x) continued by a step y–z, z ∉ {x, a},
// by the two edges xz and az: [neither, az only, xz only, both].
func continuations(g *delta.Graph, x uint32) (n [4]uint64) {
	as := g.Neighbors(x).ToArray()
	for _, a := range as {
		for _, y := range g.Neighbors(a).ToArray() {
			if y == x || g.Adjacent(x, y) {
				continue
			}
			for _, z := range g.Neighbors(y).ToArray() {
				if z == x || z == a {
					continue
				}
				i := 0
				if g.Adjacent(a, z) {
					i |= 1
				}
				if g.Adjacent(x, z) {
					i |= 2
				}
				n[i]++
			}
		}
	}
	return n
}

// TestRingShareIsTheClosingContinuations holds the derivation of
// RingAgainst against the graph itself: on a random graph with a hub and
// a planted K_{2,5}, built through the applier, every node's end of
// 4-path, tail end of tailed triangle, 4-cycle and degree-2 diamond
// counts are its continuations of the four kinds (the last three counted
// twice), and the orbit-share score is the share of continuations that
// close a 4-cycle.
func TestRingShareIsTheClosingContinuations(t *testing.T) {
	cat := undirected4(t)
	m := newMarket(t)
	r := rand.New(rand.NewPCG(13, 1))
	const nodes = 80
	for range 240 {
		a := r.IntN(nodes)
		b := (a + 1 + r.IntN(nodes-1)) % nodes
		m.pay(acct(a), acct(b))
	}
	for i := range 30 {
		m.pay(acct(i), "shop-hub")
	}
	for _, s := range []string{"ring-s1", "ring-s2"} {
		for i := range 5 {
			m.pay(s, fmt.Sprintf("ring-r%d", i))
		}
	}
	against := alert.RingAgainst(cat)
	share := func(node string) (float64, uint64) {
		x, _ := m.ap.Lookup(node)
		v := m.vectors().Row(x)
		return alert.Share(v, 8, against), v[8]
	}
	// A K_{2,5} on its own: every continuation of a sender closes.
	for _, s := range []string{"ring-s1", "ring-s2"} {
		if sh, c := share(s); sh != 1 || c != 10 {
			t.Errorf("%s in a K_{2,5} alone: share %v with %d 4-cycles, want 1 with 10", s, sh, c)
		}
	}
	// One tie of ring-s1 to a background account opens 4-paths for both
	// senders (ring-s2–ring-r–ring-s1–acct).
	m.pay("ring-s1", acct(3))
	for _, s := range []string{"ring-s1", "ring-s2"} {
		if sh, _ := share(s); sh >= 1 || sh <= 0 {
			t.Errorf("%s with a tie outside the ring: share %v, want in (0, 1)", s, sh)
		}
	}
	g := m.ap.Graph()
	for x := range uint32(len(m.ap.Names())) {
		v := m.vectors().Row(x)
		n := continuations(g, x)
		if n[0] != v[4] || n[1] != 2*v[9] || n[2] != 2*v[8] || n[3] != 2*v[12] {
			t.Fatalf("%s: continuations %v, want [o4 2·o9 2·o8 2·o12] of %v", m.ap.Names()[x], n, v)
		}
		want := 0.0
		if total := n[0] + n[1] + n[2] + n[3]; total > 0 {
			want = float64(n[2]) / float64(total)
		}
		if got := alert.Share(v, 8, against); math.Abs(got-want) > 1e-12 {
			t.Fatalf("%s: share %v, closing continuations %v", m.ap.Names()[x], got, want)
		}
	}
}

func TestShareByHand(t *testing.T) {
	v := make([]uint64, 15)
	against := []alert.OrbitWeight{{Orbit: 4, Weight: 0.5}, {Orbit: 9, Weight: 1}, {Orbit: 12, Weight: 2}}
	if got := alert.Share(v, 8, against); got != 0 {
		t.Errorf("all zero: share %v, want 0", got)
	}
	v[8], v[4], v[9], v[12] = 6, 8, 1, 1 // 6 / (6 + 4 + 1 + 2)
	if got, want := alert.Share(v, 8, against), 6.0/13; got != want {
		t.Errorf("share %v, want %v", got, want)
	}
	v[8] = 0
	if got := alert.Share(v, 8, against); got != 0 {
		t.Errorf("no 4-cycles: share %v, want 0", got)
	}
}

// shareAndGrowth returns a config with the demo's two ways of scoring a
// ring: the share of 4-cycles among the continuations (RingAgainst), and
// the growth of the 4-cycle count the demo used before.
func shareAndGrowth(t *testing.T) alert.Config {
	cat := undirected4(t)
	gate := func(r alert.Rule) alert.Rule {
		r.MinDegree, r.MinTotal, r.MinCount, r.Cooldown = 3, 10, 8, time.Hour
		return r
	}
	cfg := configOf(
		gate(alert.Rule{Name: "ring-share", Kind: alert.OrbitShare, Orbit: 8, Against: alert.RingAgainst(cat), Fire: 0.8, Rearm: 0.5}),
		gate(alert.Rule{Name: "ring-growth", Kind: alert.OrbitGrowth, Orbit: 8, Fire: 10, Rearm: 3}),
	)
	return cfg
}

// cutAll evaluates every node of m whose record changed since the last
// cut (as the alert stage does), with its vector at base (nil: none) as
// its baseline.
func cutAll(ev *alert.Evaluator, m *market, base *delta.Vectors) []alert.Alert {
	var nodes []alert.NodeChange
	vec := m.vectors()
	m.ap.Counter().Changed(func(x uint32) {
		nc := alert.NodeChange{Node: m.ap.Names()[x], Degree: m.ap.Graph().Degree(x), Now: vec.Row(x)}
		if base != nil && int(x) < base.NumNodes() {
			nc.Baseline = base.Row(x)
		}
		nodes = append(nodes, nc)
	})
	return ev.Evaluate(alert.Cut{Seq: m.n, EventTime: m.ap.Watermark()}, nodes)
}

func rulesOn(as []alert.Alert, node string) []string {
	var out []string
	for _, a := range as {
		if a.Node == node {
			out = append(out, a.Rule)
		}
	}
	return out
}

// TestRingShareTellsARingFromAHubCustomer builds a market through the
// applier: 120 households, each paying one of six shops (a third of them
// a second one), every other one also paying a big shop. A new household
// that pays two small shops and then, for the first time, the big one
// closes dozens of 4-cycles at once: the growth rule fires on it, the
// share rule must not. Two accounts that then both pay the same five
// fresh accounts must raise the share rule on each of the two, at share
// 1, and on nothing else.
func TestRingShareTellsARingFromAHubCustomer(t *testing.T) {
	cat := undirected4(t)
	m := newMarket(t)
	for i := range 120 {
		h := fmt.Sprintf("hh-%03d", i)
		m.pay(h, fmt.Sprintf("shop-%d", i%6))
		if i%3 == 0 {
			m.pay(h, fmt.Sprintf("shop-%d", (i+1)%6))
		}
		if i%2 == 0 {
			m.pay(h, "shop-big")
		}
	}
	m.pay("hh-new", "shop-1")
	m.pay("hh-new", "shop-4")
	ev := alert.New(shareAndGrowth(t), cat)
	for _, a := range cutAll(ev, m, nil) {
		if a.Rule == "ring-share" {
			t.Errorf("opening cut: %s on %s, score %.3f", a.Rule, a.Node, a.Score)
		}
	}
	before := m.vectors()
	x, _ := m.ap.Lookup("hh-new")
	m.pay("hh-new", "shop-big")
	now := m.vectors().Row(x)
	if now[8] < 10*max(before.Get(x, 8), 1) || now[8] < 8 {
		t.Fatalf("hh-new: 4-cycles %d → %d, the market does not make the case it is meant to", before.Get(x, 8), now[8])
	}
	sh := alert.Share(now, 8, alert.RingAgainst(cat))
	t.Logf("hh-new after its first payment to shop-big: %d 4-cycles (from %d), share %.3f", now[8], before.Get(x, 8), sh)
	got := cutAll(ev, m, before)
	if r := rulesOn(got, "hh-new"); !slices.Contains(r, "ring-growth") || slices.Contains(r, "ring-share") {
		t.Errorf("hh-new paying shop-big: rules %v, want ring-growth and not ring-share", r)
	}
	for _, a := range got {
		if a.Rule == "ring-share" {
			t.Errorf("hub cut: ring-share on %s, score %.3f", a.Node, a.Score)
		}
	}
	before = m.vectors()
	for _, s := range []string{"ring-s1", "ring-s2"} {
		for i := range 5 {
			m.pay(s, fmt.Sprintf("ring-r%d", i))
		}
	}
	got = cutAll(ev, m, before)
	var fired []string
	for _, a := range got {
		if a.Rule != "ring-share" {
			continue
		}
		fired = append(fired, a.Node)
		if a.Score != 1 || a.Orbits[0].Orbit != 8 || a.Orbits[0].After != 10 || a.Kind != "orbit-share" {
			t.Errorf("ring alert %+v: want score 1, the 4-cycle orbit first with 10", a)
		}
	}
	slices.Sort(fired)
	if !slices.Equal(fired, []string{"ring-s1", "ring-s2"}) {
		t.Errorf("ring cut: ring-share on %v, want ring-s1 and ring-s2", fired)
	}
}

func TestParseOrbitShare(t *testing.T) {
	cat := undirected4(t)
	cfg, err := alert.ParseConfig([]byte(`
rules:
  - name: ring
    kind: orbit-share
    orbit: 4-cycle
    against:
      end of 4-path: 0.5
      tail end of tailed triangle: 1
      12: 1
    fire: 0.8
    min_count: 8
  - name: closed
    kind: orbit-share
    orbit: 8
    against: [end of 4-path, leaf of 3-star]
    fire: 0.5
`), cat)
	if err != nil {
		t.Fatal(err)
	}
	r := cfg.Rules[0]
	if r.Kind != alert.OrbitShare || r.Orbit != 8 || !slices.Equal(r.Against, alert.RingAgainst(cat)) ||
		r.Fire != 0.8 || math.Abs(r.Rearm-alert.DefaultRearmShare*0.8) > 1e-12 || r.MinCount != 8 {
		t.Errorf("rule %+v", r)
	}
	if want := []alert.OrbitWeight{{Orbit: 4, Weight: 1}, {Orbit: 6, Weight: 1}}; !slices.Equal(cfg.Rules[1].Against, want) {
		t.Errorf("list against: %v, want %v", cfg.Rules[1].Against, want)
	}
	head := "rules:\n  - name: a\n    kind: orbit-share\n    orbit: 8\n    fire: 0.8\n"
	cases := []struct{ name, text, want string }{
		{"no against", head, "line 2: orbit-share rule \"a\" has no against orbits"},
		{"fire above 1", strings.Replace(head, "0.8", "1.2", 1) + "    against: [4]\n", "line 5: fire 1.2 out of range (0, 1] for an orbit-share rule"},
		{"own orbit", head + "    against: [4-cycle]\n", "line 6: against lists the rule's own orbit 8"},
		{"twice", head + "    against:\n      4: 1\n      end of 4-path: 2\n", "line 6: against lists orbit 4 twice"},
		{"zero weight", head + "    against:\n      4: 0\n", "line 6: against weight 0 of orbit 4 must be a finite number > 0"},
		{"weight not a number", head + "    against:\n      4: half\n", `line 7: "half" is not a number`},
		{"unknown orbit", head + "    against: [end of 5-path]\n", "line 6: no orbit named \"end of 5-path\""},
		{"orbit out of range", head + "    against:\n      - 4\n      - 15\n", "line 8: orbit 15 out of range 0..14"},
		{"empty", head + "    against: []\n", "line 6: against is an empty list"},
		{"scalar", head + "    against: 4\n", "line 6: against must be a list of orbits or a mapping"},
		{"on another kind", "rules:\n  - name: a\n    kind: orbit-count\n    orbit: 8\n    fire: 3\n    against: [4]\n", "line 6: against is only for orbit-share rules, not orbit-count"},
	}
	for _, c := range cases {
		_, err := alert.ParseConfig([]byte(c.text), cat)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: got %v, want an error containing %q", c.name, err, c.want)
		}
	}
}
