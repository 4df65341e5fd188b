package demo

import (
	"slices"
	"strings"
	"testing"
	"time"

	"orbitwatch/delta"
	"orbitwatch/delta/catalog"
	"orbitwatch/shard"
	"orbitwatch/shard/alert"
)

func TestGenerateDeterministic(t *testing.T) {
	a, b := Generate(SmallConfig()), Generate(SmallConfig())
	if !slices.Equal(a.Events, b.Events) || a.Background != b.Background || len(a.Patterns) != len(b.Patterns) {
		t.Fatal("two scenarios of the same config differ")
	}
	for i := range a.Patterns {
		if !slices.Equal(a.Patterns[i].Nodes, b.Patterns[i].Nodes) || a.Patterns[i].Complete != b.Patterns[i].Complete {
			t.Fatalf("pattern %s differs between two runs", a.Patterns[i].Name)
		}
	}
	c := SmallConfig()
	c.Seed = 2
	if slices.Equal(Generate(c).Events, a.Events) {
		t.Fatal("another seed gave the same stream")
	}
	for i := 1; i < len(a.Events); i++ {
		if a.Events[i].TS.Before(a.Events[i-1].TS) {
			t.Fatalf("event %d goes back in time", i+1)
		}
		if a.Events[i].Src == a.Events[i].Dst {
			t.Fatalf("event %d is a self-loop", i+1)
		}
	}
	for i := range a.Opening {
		if !a.Events[i].TS.Equal(c.Start) {
			t.Fatalf("opening event %d at %s, want %s", i+1, a.Events[i].TS, c.Start)
		}
	}
}

// TestPatternsApart: every pattern has its own nodes, a complete time
// within the steady traffic, and a rule of the demo's rules of each kind
// meant to find it (a quiet pattern none).
func TestPatternsApart(t *testing.T) {
	sc := Generate(SmallConfig())
	owner := map[string]string{}
	for _, p := range sc.Patterns {
		for _, n := range p.Nodes {
			if o, ok := owner[n]; ok {
				t.Errorf("%s is in %s and %s", n, o, p.Name)
			}
			owner[n] = p.Name
		}
		for _, n := range p.Expect {
			if !slices.Contains(p.Nodes, n) {
				t.Errorf("%s: expected node %s is not one of its nodes", p.Name, n)
			}
		}
		if p.Quiet != (len(p.FoundBy) == 0) || p.Quiet != (len(p.Expect) == 0) {
			t.Errorf("%s: quiet %v with %d finders and %d expected nodes", p.Name, p.Quiet, len(p.FoundBy), len(p.Expect))
		}
		if !p.Complete.After(sc.Config.Start) || p.Complete.After(sc.Config.Start.Add(sc.Config.Steady)) {
			t.Errorf("%s complete at %s, outside the steady traffic", p.Name, p.Complete)
		}
		for _, f := range p.FoundBy {
			cat, err := catalog.New(f.Kind, f.MinNodes)
			if err != nil {
				t.Fatal(err)
			}
			cfg, err := AlertConfig(cat)
			if err != nil {
				t.Fatal(err)
			}
			if !slices.ContainsFunc(cfg.Rules, func(r alert.Rule) bool { return r.Name == f.Rule }) {
				t.Errorf("%s: no rule %s among the demo rules of %v 2–%d", p.Name, f.Rule, f.Kind, f.MinNodes)
			}
		}
	}
}

// applied returns an applier that counted the whole of sc as kind on up
// to k nodes.
func applied(t *testing.T, sc *Scenario, kind delta.Kind, k int) *shard.Applier {
	t.Helper()
	counting, err := shard.NewCounting(kind, k)
	if err != nil {
		t.Fatal(err)
	}
	ap := shard.NewApplier(counting, 0, shard.Cuts{})
	for i, e := range sc.Events {
		if err := ap.Apply(uint64(i+1), e); err != nil {
			t.Fatalf("event %d: %v", i+1, err)
		}
	}
	return ap
}

// orbitNamed returns the orbit of cat with that name or short name.
func orbitNamed(t *testing.T, cat *catalog.Catalog, name string) int {
	t.Helper()
	for _, o := range cat.Orbits {
		if o.Name == name || o.Short == name {
			return o.ID
		}
	}
	t.Fatalf("no orbit named %q in the %v catalog", name, cat.Kind)
	return -1
}

// TestPlantedPatterns applies the stream as an undirected graph and
// checks, by the counting engine and by hand from the adjacency, that each
// pattern meant for it is in the final graph.
func TestPlantedPatterns(t *testing.T) {
	sc := Generate(SmallConfig())
	ap := applied(t, sc, delta.Undirected, 4)
	// Pržulj 2007 orbit numbering: 0 edge, 7 centre of 3-star, 8 4-cycle,
	// 14 K4 (catalog names checked below).
	cat := ap.Counting().Catalog
	for o, name := range map[int]string{7: "centre of 3-star", 8: "4-cycle", 14: "K4"} {
		if cat.Orbits[o].Name != name {
			t.Fatalf("orbit %d is %q, want %q", o, cat.Orbits[o].Name, name)
		}
	}
	g := ap.Graph()
	vec, err := ap.Vectors()
	if err != nil {
		t.Fatal(err)
	}
	id := func(n string) uint32 {
		x, ok := ap.Lookup(n)
		if !ok {
			t.Fatalf("planted node %s is not in the stream", n)
		}
		return x
	}
	get := func(n string, o int) uint64 { return vec.Get(id(n), o) }

	fan := sc.Pattern("fan-out")
	mule := id(fan.Nodes[0])
	if d := g.Degree(mule); d != 1+muleOut+fanOut {
		t.Fatalf("mule degree %d, want %d", d, 1+muleOut+fanOut)
	}
	// Induced 3-stars centred on the mule, counted from the adjacency:
	// triples of its neighbours with no edge among them.
	var nb []uint32
	it := g.Neighbors(mule).Iterator()
	for it.HasNext() {
		nb = append(nb, it.Next())
	}
	var stars uint64
	for i := range nb {
		for j := i + 1; j < len(nb); j++ {
			for k := j + 1; k < len(nb); k++ {
				if !g.HasEdge(nb[i], nb[j]) && !g.HasEdge(nb[i], nb[k]) && !g.HasEdge(nb[j], nb[k]) {
					stars++
				}
			}
		}
	}
	if got := get(fan.Nodes[0], 7); got != stars || got < 200 {
		t.Fatalf("mule: %d centre-of-3-star counts, %d by hand (want equal and ≥ 200)", got, stars)
	}

	// K_{2,5} on fresh accounts: through a sender C(5,2) = 10 4-cycles,
	// through a receiver 4; no triangles.
	ring := sc.Pattern("ring")
	for _, n := range ring.Nodes {
		want := uint64(4)
		if slices.Contains(ring.Expect, n) {
			want = 10
		}
		if got := get(n, 8); got != want {
			t.Fatalf("ring node %s: %d 4-cycles, want %d", n, got, want)
		}
	}
	// K5 on fresh accounts: each member in C(4,3) = 4 K4s, degree 4.
	cl := sc.Pattern("clique")
	for _, n := range cl.Nodes {
		if got, d := get(n, 14), g.Degree(id(n)); got != 4 || d != 4 {
			t.Fatalf("clique node %s: %d K4s and degree %d, want 4 and 4", n, got, d)
		}
	}
	// No K4 anywhere else but in the dispute ring (five accounts that pay
	// each other and the same shops): the background is K4-free by
	// construction.
	dr := sc.Pattern("dispute-ring")
	for x, name := range ap.Names() {
		if vec.Get(uint32(x), 14) != 0 && !slices.Contains(cl.Nodes, name) && !slices.Contains(dr.Nodes, name) {
			t.Fatalf("%s outside the clique and the dispute ring is in %d K4s", name, vec.Get(uint32(x), 14))
		}
	}
	// The hub is the busiest shop.
	hub := id(sc.Pattern("hub").Nodes[0])
	shops := 0
	for x, name := range ap.Names() {
		if !strings.HasPrefix(name, "shop-") {
			continue
		}
		shops++
		if uint32(x) != hub && g.Degree(uint32(x)) >= g.Degree(hub) {
			t.Fatalf("%s has degree %d, the hub %d", name, g.Degree(uint32(x)), g.Degree(hub))
		}
	}
	if shops != sc.Config.Shops {
		t.Fatalf("%d shops in the stream, want %d", shops, sc.Config.Shops)
	}
	inPattern := 0
	for _, p := range sc.Patterns {
		if !p.Quiet {
			inPattern += len(p.Nodes)
		}
	}
	if want := len(ap.Names()) - inPattern; sc.Background != want {
		t.Fatalf("%d background nodes, want %d of %d nodes outside the patterns", sc.Background, want, len(ap.Names()))
	}
}

// flows are the one-way arcs of a stream read as payments: payers[x]
// pay x and x does not pay them; payees[x] the other way round.
type flows struct {
	arc            map[[2]string]bool
	payers, payees map[string][]string
}

func flowsOf(sc *Scenario) flows {
	f := flows{arc: map[[2]string]bool{}, payers: map[string][]string{}, payees: map[string][]string{}}
	for _, e := range sc.Events {
		f.arc[[2]string{e.Src, e.Dst}] = true
	}
	for a := range f.arc {
		if !f.arc[[2]string{a[1], a[0]}] {
			f.payees[a[0]] = append(f.payees[a[0]], a[1])
			f.payers[a[1]] = append(f.payers[a[1]], a[0])
		}
	}
	return f
}

// TestPlantedFlows applies the stream as a directed graph (2–3 and 2–4
// nodes) and checks by hand from the arcs, and by the counters, the
// patterns meant for it: the cycles of funds are one-way cycles (each
// member in one induced directed 3- or 4-cycle), the pass-through account
// has six payers and eight payees, the collection account 25 payers, the
// mule 33 payees, the biggest payroll provider pays more than any other
// node; and that no node outside the cycles is on a one-way directed
// cycle of three (the background has none by construction).
func TestPlantedFlows(t *testing.T) {
	sc := Generate(SmallConfig())
	f := flowsOf(sc)
	for _, c := range []struct {
		name        string
		payers, out int
	}{{"pass-through", passIn, passOut}, {"fan-in", fanIn, 1}, {"fan-out", 1, muleOut + fanOut}} {
		n := sc.Pattern(c.name).Expect[0]
		if len(f.payers[n]) != c.payers || len(f.payees[n]) != c.out {
			t.Errorf("%s %s: %d payers and %d payees, want %d and %d", c.name, n, len(f.payers[n]), len(f.payees[n]), c.payers, c.out)
		}
	}
	payroll := sc.Pattern("payroll").Nodes[0]
	for n, out := range f.payees {
		if n != payroll && len(out) >= len(f.payees[payroll]) {
			t.Errorf("%s pays %d, the payroll provider %s only %d", n, len(out), payroll, len(f.payees[payroll]))
		}
	}
	// One-way 3-cycles by hand: a→b→c→a along one-way arcs (so no tie
	// of the three goes both ways, and the three arcs are all there are).
	onCycle := map[string]int{}
	for a, outs := range f.payees {
		for _, b := range outs {
			for _, c := range f.payees[b] {
				if slices.Contains(f.payees[c], a) {
					onCycle[a]++ // each cycle is found once from each of its nodes
				}
			}
		}
	}
	for _, k := range []int{3, 4} {
		ap := applied(t, sc, delta.Directed, k)
		cat := ap.Counting().Catalog
		tri := orbitNamed(t, cat, "any node of a directed 3-cycle")
		vec, err := ap.Vectors()
		if err != nil {
			t.Fatal(err)
		}
		for x, name := range ap.Names() {
			got := vec.Get(uint32(x), tri)
			if got != uint64(onCycle[name]) {
				t.Fatalf("directed 2–%d: %s on %d one-way 3-cycles by the counter, %d by hand", k, name, got, onCycle[name])
			}
			if m := sc.Member(name); got > 0 && m != "cycle-3" {
				t.Errorf("directed 2–%d: %s (%q) on %d one-way 3-cycles", k, name, m, got)
			}
		}
		for _, n := range sc.Pattern("cycle-3").Nodes {
			x, _ := ap.Lookup(n)
			if vec.Get(x, tri) != 1 {
				t.Errorf("cycle-3 member %s on %d directed 3-cycles, want 1", n, vec.Get(x, tri))
			}
		}
		if k == 4 {
			quad := orbitNamed(t, cat, "any node of a directed 4-cycle")
			for x, name := range ap.Names() {
				want := uint64(0)
				if sc.Member(name) == "cycle-4" {
					want = 1
				}
				if got := vec.Get(uint32(x), quad); got != want {
					t.Errorf("%s (%q) on %d induced one-way 4-cycles, want %d", name, sc.Member(name), got, want)
				}
			}
		}
	}
}

// TestPlantedDisputes applies the stream as a signed graph and checks by
// hand from the events, and by the counters, the patterns meant for it
// and what the background's disputes are: in the background only a shop
// pays a household back on a dispute, and only one that paid it; each
// dispute-ring member is in 3 shops × 4 other members = 12 triangles of
// one positive and two negative ties, on the positive one; the merchant
// with a star of chargebacks has 14 negative ties and 6 positive; the
// go-between is in 8 triangles, every one unbalanced.
func TestPlantedDisputes(t *testing.T) {
	sc := Generate(SmallConfig())
	paid := map[[2]string]bool{}
	for i, e := range sc.Events {
		if !e.Neg {
			paid[[2]string{e.Src, e.Dst}] = true
			continue
		}
		if m := sc.Member(e.Src); m == "" || sc.Pattern(m).Quiet {
			if !strings.HasPrefix(e.Src, "shop-") || !strings.HasPrefix(e.Dst, "acct-") || !paid[[2]string{e.Dst, e.Src}] {
				t.Errorf("background dispute %d: %s pays %s back, who did not pay it", i+1, e.Src, e.Dst)
			}
		}
	}
	ap := applied(t, sc, delta.Signed, 3)
	cat := ap.Counting().Catalog
	vec, err := ap.Vectors()
	if err != nil {
		t.Fatal(err)
	}
	get := func(n, orbit string) uint64 {
		x, ok := ap.Lookup(n)
		if !ok {
			t.Fatalf("%s not in the stream", n)
		}
		return vec.Get(x, orbitNamed(t, cat, orbit))
	}
	for _, n := range sc.Pattern("dispute-ring").Expect {
		if got := get(n, "node between a positive and a negative tie of a triangle with 2 negative ties (balanced)"); got != disputed*(disputers-1) {
			t.Errorf("dispute-ring member %s in %d triangles of two disputes, on the positive tie; want %d", n, got, disputed*(disputers-1))
		}
	}
	m := sc.Pattern("chargeback-star").Expect[0]
	if neg, pos := get(m, "end of a negative tie"), get(m, "end of a positive tie"); neg != starBack || pos != starPaid-starBack {
		t.Errorf("merchant %s: %d negative and %d positive ties, want %d and %d", m, neg, pos, starBack, starPaid-starBack)
	}
	x := sc.Pattern("go-between").Expect[0]
	unbalanced := get(x, "node between two positive ties of a triangle with 1 negative tie (unbalanced)") +
		get(x, "node between a positive and a negative tie of a triangle with 1 negative tie (unbalanced)") +
		get(x, "any node of an all-negative triangle (unbalanced)")
	if unbalanced != goBuyers*goPerBuyer {
		t.Errorf("go-between %s in %d unbalanced triangles, want %d", x, unbalanced, goBuyers*goPerBuyer)
	}
}

// TestBigPayroll: in the demo's full scenario the biggest payroll
// provider pays over a thousand households, and takes on 150 more from
// 2 h 30 min.
func TestBigPayroll(t *testing.T) {
	sc := Generate(DefaultConfig())
	p := sc.Pattern("payroll")
	payees := map[string]bool{}
	late := 0
	for _, e := range sc.Events {
		if e.Src == p.Nodes[0] && !payees[e.Dst] {
			payees[e.Dst] = true
			if !e.TS.Before(sc.Config.Start.Add(150 * time.Minute)) {
				late++
			}
		}
	}
	if len(payees) < 1000 || late != sc.Config.Households/staffShare {
		t.Fatalf("payroll provider %s pays %d households, %d first from 2 h 30 min; want > 1000 and %d", p.Nodes[0], len(payees), late, sc.Config.Households/staffShare)
	}
}
