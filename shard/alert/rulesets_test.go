package alert_test

import (
	"fmt"
	"math/rand/v2"
	"slices"
	"testing"
	"time"

	"orbitwatch/delta"
	"orbitwatch/delta/catalog"
	"orbitwatch/shard"
	"orbitwatch/shard/alert"
	"orbitwatch/stream"
)

// ruleOf returns the rule of cfg named name.
func ruleOf(t *testing.T, cfg alert.Config, name string) alert.Rule {
	t.Helper()
	i := slices.IndexFunc(cfg.Rules, func(r alert.Rule) bool { return r.Name == name })
	if i < 0 {
		t.Fatalf("no rule %q among the defaults", name)
	}
	return cfg.Rules[i]
}

// sum returns Σ w·v_o over ws.
func sum(v []uint64, ws []alert.OrbitWeight) float64 {
	s := 0.0
	for _, w := range ws {
		s += w.Weight * float64(v[w.Orbit])
	}
	return s
}

// count returns a rule's count of v: its orbit plus its With orbits.
func count(v []uint64, r alert.Rule) float64 {
	return float64(v[r.Orbit]) + sum(v, r.With)
}

// coverage records which orbits were ever non-zero, so that a test can
// demand that every orbit a rule sums was seen: a rule that left one out
// would then have disagreed with the count by hand.
type coverage map[int]bool

func (c coverage) see(v []uint64) {
	for o, x := range v {
		if x > 0 {
			c[o] = true
		}
	}
}

func (c coverage) demand(t *testing.T, cat *catalog.Catalog, r alert.Rule) {
	t.Helper()
	orbits := []int{r.Orbit}
	for _, w := range append(slices.Clone(r.With), r.Against...) {
		orbits = append(orbits, w.Orbit)
	}
	for _, o := range orbits {
		if !c[o] {
			t.Errorf("rule %s: orbit %d (%s) never non-zero in the test streams, so it is not checked", r.Name, o, cat.Orbits[o].Name)
		}
	}
}

// randomStream returns adds and removes of ties among n nodes "n00"…:
// adds of a random pair (with probability rev the reverse of a present
// arc, to make reciprocal pairs), negative with probability neg, and with
// probability 0.2 a remove of a present tie of its own sign. present
// tracks multiplicities by (src, dst, neg).
func randomStream(r *rand.Rand, n, events int, rev, neg float64) []stream.Event {
	type key struct {
		a, b string
		neg  bool
	}
	present := map[key]int{}
	var keys []key
	name := func(i int) string { return fmt.Sprintf("n%02d", i) }
	at := time.Date(2026, 5, 1, 0, 0, 0, 0, time.UTC)
	var out []stream.Event
	for len(out) < events {
		at = at.Add(time.Second)
		if r.Float64() < 0.2 && len(keys) > 0 {
			i := r.IntN(len(keys))
			k := keys[i]
			present[k]--
			if present[k] == 0 {
				keys = slices.Delete(keys, i, i+1)
			}
			out = append(out, stream.Event{TS: at, HasTS: true, Op: stream.OpRemove, Src: k.a, Dst: k.b, Neg: k.neg})
			continue
		}
		var k key
		if r.Float64() < rev && len(keys) > 0 {
			p := keys[r.IntN(len(keys))]
			k = key{p.b, p.a, r.Float64() < neg}
		} else {
			a := r.IntN(n)
			b := (a + 1 + r.IntN(n-1)) % n
			k = key{name(a), name(b), r.Float64() < neg}
		}
		if present[k] == 0 {
			keys = append(keys, k)
		}
		present[k]++
		out = append(out, stream.Event{TS: at, HasTS: true, Op: stream.OpAdd, Src: k.a, Dst: k.b, Neg: k.neg})
	}
	return out
}

// applyChecking applies events through the product's counters (kind, k)
// and, every every events, calls check with the applier.
func applyChecking(t *testing.T, kind delta.Kind, k int, events []stream.Event, every int, check func(ap *shard.Applier, prefix []stream.Event)) {
	t.Helper()
	counting, err := shard.NewCounting(kind, k)
	if err != nil {
		t.Fatal(err)
	}
	ap := shard.NewApplier(counting, 0, shard.Cuts{})
	for i, e := range events {
		if err := ap.Apply(uint64(i+1), e); err != nil {
			t.Fatalf("event %d: %v", i+1, err)
		}
		if (i+1)%every == 0 || i == len(events)-1 {
			check(ap, events[:i+1])
		}
	}
}

// TestDirectedRuleCounts holds the counts of the directed built-in rules
// (DirectedRules), taken from the vectors of the product's directed
// counters, against the same quantities counted by hand from the arcs of
// the stream at every checkpoint: pairs of payees C(out, 2), pairs of
// payers C(in, 2), (payer, payee) pairs in·out (in and out counting only
// one-way counterparties), and the node's induced one-way directed 3- and
// 4-cycles, enumerated over every node set. Every orbit the rules sum is
// seen non-zero, so leaving one out would fail.
func TestDirectedRuleCounts(t *testing.T) {
	for _, k := range []int{3, 4} {
		cat, err := catalog.New(delta.Directed, k)
		if err != nil {
			t.Fatal(err)
		}
		cfg := alert.DefaultConfig(cat)
		fanOut, fanIn, pass, trip := ruleOf(t, cfg, "fan-out"), ruleOf(t, cfg, "fan-in"), ruleOf(t, cfg, "pass-through"), ruleOf(t, cfg, "round-trip")
		seen := coverage{}
		checks := 0
		for seed, shape := range []struct {
			n, events int
			rev       float64
		}{{12, 60, 0.3}, {30, 400, 0.3}, {24, 120, 0.05}, {40, 900, 0.4}} {
			events := randomStream(rand.New(rand.NewPCG(uint64(seed), 11)), shape.n, shape.events, shape.rev, 0)
			applyChecking(t, delta.Directed, k, events, 50, func(ap *shard.Applier, prefix []stream.Event) {
				arc := map[[2]string]int{}
				for _, e := range prefix {
					if e.Op == stream.OpAdd {
						arc[[2]string{e.Src, e.Dst}]++
					} else {
						arc[[2]string{e.Src, e.Dst}]--
					}
				}
				has := func(a, b string) bool { return arc[[2]string{a, b}] > 0 }
				names := ap.Names()
				checks += eachVector(t, ap, seen, func(name string, vec []uint64) {
					in, out := 0, 0
					for _, a := range names {
						if a == name {
							continue
						}
						switch xa, ax := has(name, a), has(a, name); {
						case xa && !ax:
							out++
						case ax && !xa:
							in++
						}
					}
					want := map[string]float64{
						"fan-out": float64(out * (out - 1) / 2), "fan-in": float64(in * (in - 1) / 2),
						"pass-through": float64(in * out), "round-trip": float64(oneWayCycles(names, name, has, 3)),
					}
					if k == 4 {
						want["round-trip"] += float64(oneWayCycles(names, name, has, 4))
					}
					for _, r := range []alert.Rule{fanOut, fanIn, pass, trip} {
						if got := count(vec, r); got != want[r.Name] {
							t.Fatalf("directed 2–%d, %d events: %s count of %s is %v from the counter, %v by hand", k, len(prefix), r.Name, name, got, want[r.Name])
						}
					}
				})
			})
		}
		for _, r := range []alert.Rule{fanOut, fanIn, pass, trip} {
			seen.demand(t, cat, r)
		}
		t.Logf("directed 2–%d: %d node checks", k, checks)
	}
}

// eachVector calls check with every node of ap and its vector, marks the
// vector's orbits seen, and returns the number of nodes.
func eachVector(t *testing.T, ap *shard.Applier, seen coverage, check func(name string, vec []uint64)) int {
	t.Helper()
	for x, name := range ap.Names() {
		vec, err := ap.Vector(uint32(x), nil)
		if err != nil {
			t.Fatal(err)
		}
		seen.see(vec)
		check(name, vec)
	}
	return len(ap.Names())
}

// oneWayCycles counts the node sets of size k (3 or 4) holding x whose
// induced arcs are exactly one directed cycle through all k nodes: k arcs,
// each node paying one and paid by one of the others, no pair both ways.
func oneWayCycles(names []string, x string, has func(a, b string) bool, k int) int {
	var others []string
	for _, n := range names {
		if n != x {
			others = append(others, n)
		}
	}
	n := 0
	var walk func(start int, set []string)
	walk = func(start int, set []string) {
		if len(set) == k {
			if isOneWayCycle(set, has) {
				n++
			}
			return
		}
		for i := start; i < len(others); i++ {
			walk(i+1, append(set, others[i]))
		}
	}
	walk(0, []string{x})
	return n
}

func isOneWayCycle(set []string, has func(a, b string) bool) bool {
	arcs := 0
	for _, a := range set {
		in, out := 0, 0
		for _, b := range set {
			if a == b {
				continue
			}
			if has(a, b) {
				out++
				arcs++
				if has(b, a) {
					return false
				}
			}
			if has(b, a) {
				in++
			}
		}
		if in != 1 || out != 1 {
			return false
		}
	}
	// k arcs, in- and out-degree 1 each and no pair both ways: one cycle
	// through all k nodes, since a shorter one would need 2 nodes (a pair
	// both ways) and leave the rest another cycle of fewer than 3.
	return arcs == len(set)
}

// TestSignedRuleCounts holds the counts of the signed built-in rules
// (SignedRules), from the product's signed counters, against the same
// quantities counted by hand from the stream at every checkpoint: a pair
// is a tie while either multiplicity is above zero, negative while its
// negative one is (README, Signed graphs); per node its negative and
// positive ties, its triangles with an odd number of negative ties
// (unbalanced, Cartwright & Harary 1956) and with an even number, and its
// triangles of two negative ties in which it is on the positive one.
func TestSignedRuleCounts(t *testing.T) {
	for _, k := range []int{3, 4} {
		cat, err := catalog.New(delta.Signed, k)
		if err != nil {
			t.Fatal(err)
		}
		cfg := alert.DefaultConfig(cat)
		star, ring, unbal := ruleOf(t, cfg, "chargeback-star"), ruleOf(t, cfg, "dispute-ring"), ruleOf(t, cfg, "unbalanced-triangles")
		seen := coverage{}
		checks := 0
		for seed, shape := range []struct{ n, events int }{{12, 80}, {20, 300}, {30, 600}} {
			events := randomStream(rand.New(rand.NewPCG(uint64(seed), 12)), shape.n, shape.events, 0.1, 0.3)
			applyChecking(t, delta.Signed, k, events, 40, func(ap *shard.Applier, prefix []stream.Event) {
				type mult struct{ pos, neg int }
				pair := map[[2]string]*mult{}
				for _, e := range prefix {
					key := [2]string{min(e.Src, e.Dst), max(e.Src, e.Dst)}
					m := pair[key]
					if m == nil {
						m = &mult{}
						pair[key] = m
					}
					d := 1
					if e.Op == stream.OpRemove {
						d = -1
					}
					if e.Neg {
						m.neg += d
					} else {
						m.pos += d
					}
				}
				// sign: 0 no tie, +1 positive, −1 negative.
				sign := func(a, b string) int {
					m := pair[[2]string{min(a, b), max(a, b)}]
					switch {
					case m == nil || m.pos+m.neg == 0:
						return 0
					case m.neg > 0:
						return -1
					}
					return 1
				}
				names := ap.Names()
				checks += eachVector(t, ap, seen, func(name string, vec []uint64) {
					var pos, neg, balanced, unbalanced, onPositive float64
					for i, a := range names {
						sa := sign(name, a)
						switch {
						case a == name || sa == 0:
							continue
						case sa < 0:
							neg++
						default:
							pos++
						}
						for _, b := range names[i+1:] {
							sb, ab := sign(name, b), sign(a, b)
							if b == name || sb == 0 || ab == 0 {
								continue
							}
							negs := 0
							for _, s := range []int{sa, sb, ab} {
								if s < 0 {
									negs++
								}
							}
							if negs%2 == 1 {
								unbalanced++
							} else {
								balanced++
							}
							if negs == 2 && sa != sb {
								onPositive++
							}
						}
					}
					for _, c := range []struct {
						what      string
						got, want float64
					}{
						{"chargeback-star count (negative ties)", count(vec, star), neg},
						{"chargeback-star against (positive ties)", sum(vec, star.Against), pos},
						{"dispute-ring count", count(vec, ring), onPositive},
						{"unbalanced-triangles count", count(vec, unbal), unbalanced},
						{"unbalanced-triangles against (balanced)", sum(vec, unbal.Against), balanced},
					} {
						if c.got != c.want {
							t.Fatalf("signed 2–%d, %d events: %s of %s is %v from the counter, %v by hand", k, len(prefix), c.what, name, c.got, c.want)
						}
					}
				})
			})
		}
		for _, r := range []alert.Rule{star, ring, unbal} {
			seen.demand(t, cat, r)
		}
		t.Logf("signed 2–%d: %d node checks", k, checks)
	}
}

// TestOrbitsByNameAndShortName: a rules file may name an orbit by its
// catalog name or its short name, in every catalog, and either resolves
// to that orbit.
func TestOrbitsByNameAndShortName(t *testing.T) {
	for _, c := range []struct {
		kind delta.Kind
		k    int
	}{{delta.Undirected, 4}, {delta.Directed, 3}, {delta.Directed, 4}, {delta.Signed, 3}, {delta.Signed, 4}} {
		cat, err := catalog.New(c.kind, c.k)
		if err != nil {
			t.Fatal(err)
		}
		for _, o := range cat.Orbits {
			for _, name := range []string{o.Name, o.Short} {
				text := fmt.Sprintf("rules:\n  - name: a\n    kind: orbit-count\n    orbit: %q\n    fire: 1\n", name)
				cfg, err := alert.ParseConfig([]byte(text), cat)
				if err != nil {
					t.Fatalf("%v 2–%d orbit %d named %q: %v", c.kind, c.k, o.ID, name, err)
				}
				if got := cfg.Rules[0].Orbit; got != o.ID {
					t.Fatalf("%v 2–%d: %q resolves to orbit %d, want %d", c.kind, c.k, name, got, o.ID)
				}
			}
		}
	}
}
