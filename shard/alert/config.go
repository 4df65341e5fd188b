package alert

import (
	"fmt"
	"math"
	"regexp"
	"time"

	"orbitwatch/delta"
	"orbitwatch/delta/catalog"
)

// BaselineMode says what a node's vector is compared with.
type BaselineMode uint8

const (
	// BaselineLookback compares with the node's own vector a look-back
	// ago: the caller reads it as of the latest cut whose watermark is ≤
	// cut event time − Lookback and passes it as NodeChange.Baseline.
	BaselineLookback BaselineMode = iota
	// BaselineDecayed compares with an exponentially decayed average of
	// the node's past vectors, kept by the Evaluator (see Evaluate).
	BaselineDecayed
)

func (m BaselineMode) String() string {
	if m == BaselineDecayed {
		return "decayed"
	}
	return "lookback"
}

// RuleKind is what a rule measures.
type RuleKind uint8

const (
	// Signature scores the GDV distance (gdv.Metric) between the vector and
	// its baseline, in [0, 1].
	Signature RuleKind = iota
	// OrbitCount scores the rule's count c: the node's count of one
	// orbit, plus the weighted counts of the orbits of Rule.With.
	OrbitCount
	// OrbitGrowth scores now/max(before, 1) for the rule's count, before
	// being the baseline's (0 when there is no baseline: the node had
	// nothing).
	OrbitGrowth
	// OrbitShare scores the share of the rule's count c among weighted
	// counts of related orbits of the node's own vector (see
	// Rule.Against):
	//
	//	score = c / (c + Σ_a w_a·c_a)   (0 when the sum is 0)
	//
	// in [0, 1]. With the 4-cycle against the other ways a node's
	// 2-paths go on (RingAgainst), it measures how closed the node's
	// neighbourhood is, not how big: see RingAgainst for the derivation.
	OrbitShare
)

var kindNames = []string{"signature", "orbit-count", "orbit-growth", "orbit-share"}

func (k RuleKind) String() string { return kindNames[k] }

// Rule is one alert rule. A rule fires for a node when its score reaches
// Fire while armed; it is then disarmed until the score falls below Rearm
// (hysteresis), and it does not fire again for that node within Cooldown
// of event time even when re-armed.
type Rule struct {
	// Name identifies the rule in alerts, ids and filters: lower-case
	// letters, digits and '-', unique in a Config.
	Name string
	Kind RuleKind
	// Orbit is the orbit id of an orbit rule (unused for Signature).
	Orbit int
	// With are further orbits of an orbit rule whose weighted counts add
	// to Orbit's to make the rule's count (unused for Signature):
	//
	//	c = c_Orbit + Σ_w w·c_w
	//
	// so that one rule can measure a quantity that several orbits share,
	// such as the pairs of payers of a node (three orbits of the directed
	// catalog, see DirectedRules). Count and growth rules score c, share
	// rules set c against Against, and MinCount gates c. Distinct, none of
	// them Orbit or in Against, weights finite and > 0.
	With []OrbitWeight
	// Against are the weighted orbits an OrbitShare rule sets its count
	// against (unused for the other kinds): distinct, none of them Orbit,
	// weights finite and > 0.
	Against []OrbitWeight
	// Fire and Rearm are levels on the rule's score: Signature in (0, 1],
	// OrbitCount ≥ 1, OrbitGrowth > 1; 0 ≤ Rearm < Fire.
	Fire, Rearm float64
	// MinDegree and MinTotal gate the rule: a node with fewer neighbours,
	// or with a smaller sum of its orbit counts, is not scored. Signature
	// rules also need MinDegree neighbours in the baseline.
	MinDegree int
	MinTotal  uint64
	// MinCount gates orbit rules on the rule orbit's current count, so a
	// growth from 1 to 5 does not count as ×5.
	MinCount uint64
	// Cooldown is the least event time between two alerts of this rule
	// for one node.
	Cooldown time.Duration
}

// OrbitWeight is one orbit of Rule.Against with its weight.
type OrbitWeight struct {
	Orbit  int
	Weight float64
}

// RingAgainst returns the orbits an OrbitShare rule on the 4-cycle orbit
// of an undirected catalog on 4 or more nodes sets it against, so that
// the score is the share of a node's 3-step continuations that come back
// to its own counterparties. It panics when cat has no such orbits.
//
// Take every induced 2-path x–a–y of node x (x not adjacent to y: x is an
// end of the 3-path) and every step on from y to a node z ∉ {x, a}. The
// four nodes induce, by the two edges left open (xz, az):
//
//	neither: the 4-path x–a–y–z, x an end   (end of 4-path, once each)
//	az only: a triangle a–y–z with tail x   (tail end of tailed triangle, twice: z–y swapped)
//	xz only: the 4-cycle x–a–y–z            (4-cycle, twice: both directions)
//	both:    a diamond, x of degree 2       (degree-2 node of diamond, twice)
//
// (z adjacent to x but not to a, or to a but not to x, or neither, or
// both: no other case.) So the continuations number o4 + 2·o9 + 2·o8 +
// 2·o12, and those that close a 4-cycle 2·o8; halving,
//
//	share = o8 / (o8 + ½·o4 + o9 + o12)
//
// with weights ½ for the end of 4-path and 1 for the tail end of the
// tailed triangle and the degree-2 node of the diamond. A member of a
// ring of accounts that pay the same few accounts, and little else, has
// share near 1 (exactly 1 in a K_{2,n} on its own): its 2-paths lead to
// the other members and stop there. A household that pays a shop with
// many customers gains 4-cycles through them, but also a 4-path for
// every other counterparty of each of those customers that is not its
// own, so its share is about the part of its co-customers' shops that
// are also its shops, however many 4-cycles it closes. A shop's share is
// the like overlap of its customers' other shops; in a market of few
// shops it is not small (0.64 for the busiest shop of the demo's small
// scenario), so a ring rule needs a fire level well above one half.
func RingAgainst(cat *catalog.Catalog) []OrbitWeight {
	return []OrbitWeight{
		{mustOrbit(cat, "end of 4-path"), 0.5},
		{mustOrbit(cat, "tail end of tailed triangle"), 1},
		{mustOrbit(cat, "degree-2 node of diamond"), 1},
	}
}

// Config is a set of rules with their baseline and damping.
type Config struct {
	Baseline BaselineMode
	// Lookback is how far back the caller reads the baseline vector
	// (BaselineLookback); HalfLife is the event-time half-life of the
	// decayed average (BaselineDecayed).
	Lookback, HalfLife time.Duration
	// Sweep, when above zero, scores every node at the first cut after
	// each multiple of Sweep of event time, not only the nodes whose
	// records the cut touched: a node whose signature moved only because
	// its neighbours' did (a counterparty grew busy) is scored then.
	// Off by default: a sweep costs a scoring of the whole graph.
	Sweep time.Duration
	// MaxPerMinute caps the alerts emitted per minute of event time (per
	// Evaluator, that is per shard); 0 means no cap. Alerts over the cap
	// are held back: counted in Stats.Held, not emitted.
	MaxPerMinute int
	// TopOrbits is how many of the orbits that moved most an alert lists.
	TopOrbits int
	Rules     []Rule
}

// Defaults, all rules of thumb for payment graphs of a few to a few dozen
// counterparties per account, not fitted to real data. They were checked
// against the package's test scenario (our own random payments, about five
// live counterparties per account, a one-day window), where they keep the
// control stream quiet and catch the planted patterns:
//
//   - Lookback 1 h and HalfLife 1 h: the time scale of the patterns
//     looked for (a fan-out or a ring forms within an hour). A longer
//     look-back lets ordinary churn build up: with a one-day window, six
//     hours replace a quarter of every account's counterparties, and
//     background signature distances rose from ≤ 0.34 (1 h) to ≤ 0.47 in
//     the test scenario.
//   - Signature shift fires at distance 0.36 and re-arms below 0.26 (in the
//     test scenario the control's largest distance was 0.34 against a
//     look-back and 0.31 against a decayed average, the fan-out's 0.41 and
//     0.37: a thin margin, which is why orbit rules come with it); both
//     the node and its baseline need degree ≥ 3, because an account that
//     goes from one counterparty to five changes every small count from
//     0 to some and scores near 0.6 while doing nothing unusual.
//   - Gates: degree ≥ 3 and total count ≥ 10.
//   - Cool-down 1 h per node and rule; at most 60 alerts per minute per
//     shard, a pace a team can still read.
//   - For undirected catalogs of 4 or more nodes, three orbit rules for the
//     patterns investigators ask for: fan-out (centre of 3-star grows ×8
//     to at least 200, about a dozen new payees on top of four), ring
//     (4-cycle count ≥ 8 through one node; random background reached 5)
//     and clique (K4 count ≥ 2: the node is in a nearly complete group of
//     five; random background reached 0).
//   - For directed catalogs, the flow rules of DirectedRules (fan-out,
//     fan-in, pass-through, round-trip); for signed ones, the dispute
//     rules of SignedRules (chargeback-star, dispute-ring,
//     unbalanced-triangles). Every orbit rule has the gates above.
const (
	DefaultLookback     = time.Hour
	DefaultHalfLife     = time.Hour
	DefaultMaxPerMinute = 60
	DefaultTopOrbits    = 5
	DefaultMinDegree    = 3
	DefaultMinTotal     = 10
	DefaultCooldown     = time.Hour
	// DefaultRearmShare is Rearm as a share of Fire when a rule gives no
	// re-arm level.
	DefaultRearmShare = 0.7
)

// DefaultConfig returns the default rules for cat (see the constants).
func DefaultConfig(cat *catalog.Catalog) Config {
	gate := func(r Rule) Rule {
		r.MinDegree, r.MinTotal, r.Cooldown = DefaultMinDegree, DefaultMinTotal, DefaultCooldown
		return r
	}
	cfg := Config{
		Lookback: DefaultLookback, HalfLife: DefaultHalfLife,
		MaxPerMinute: DefaultMaxPerMinute, TopOrbits: min(DefaultTopOrbits, cat.NumOrbits()),
		Rules: []Rule{gate(Rule{Name: "signature-shift", Kind: Signature, Fire: 0.36, Rearm: 0.26})},
	}
	var more []Rule
	switch {
	case cat.Kind == delta.Undirected && cat.MaxNodes >= 4:
		star, cycle, k4 := mustOrbit(cat, "centre of 3-star"), mustOrbit(cat, "4-cycle"), mustOrbit(cat, "K4")
		more = []Rule{
			{Name: "fan-out", Kind: OrbitGrowth, Orbit: star, Fire: 8, Rearm: 3, MinCount: 200},
			{Name: "ring", Kind: OrbitCount, Orbit: cycle, Fire: 8, Rearm: 4},
			{Name: "clique", Kind: OrbitCount, Orbit: k4, Fire: 2, Rearm: 1},
		}
	case cat.Kind == delta.Directed:
		more = DirectedRules(cat)
	case cat.Kind == delta.Signed:
		more = SignedRules(cat)
	}
	for _, r := range more {
		cfg.Rules = append(cfg.Rules, gate(r))
	}
	return cfg
}

func mustOrbit(cat *catalog.Catalog, name string) int {
	id, ok := orbitByName(cat, name)
	if !ok {
		panic("alert: catalog has no orbit named " + name)
	}
	return id
}

// orbitByName returns the orbit whose name, or else whose short name
// (catalog.Orbit.Short: a directed orbit in payer and payee words), is
// name.
func orbitByName(cat *catalog.Catalog, name string) (int, bool) {
	for _, o := range cat.Orbits {
		if o.Name == name {
			return o.ID, true
		}
	}
	for _, o := range cat.Orbits {
		if o.Short == name {
			return o.ID, true
		}
	}
	return 0, false
}

var ruleName = regexp.MustCompile(`^[a-z0-9][a-z0-9-]{0,62}$`)

// check reports the first thing wrong with cfg for cat: the rule index
// (−1 for a top-level setting), the YAML key at fault and a message; msg
// is "" when cfg is valid. ParseConfig turns it into an error naming the
// line; New panics.
func (cfg *Config) check(cat *catalog.Catalog) (rule int, key, msg string) {
	switch {
	case cfg.Baseline > BaselineDecayed:
		return -1, "baseline", "unknown baseline mode"
	case cfg.Baseline == BaselineLookback && cfg.Lookback <= 0:
		return -1, "lookback", "lookback must be positive"
	case cfg.Baseline == BaselineDecayed && cfg.HalfLife <= 0:
		return -1, "half_life", "half_life must be positive"
	case cfg.Sweep < 0:
		return -1, "sweep", "sweep must not be negative"
	case cfg.MaxPerMinute < 0:
		return -1, "max_per_minute", "max_per_minute must not be negative"
	case cfg.TopOrbits < 1 || cfg.TopOrbits > cat.NumOrbits():
		return -1, "top_orbits", fmt.Sprintf("top_orbits must be 1..%d", cat.NumOrbits())
	case len(cfg.Rules) == 0:
		return -1, "rules", "no rules"
	}
	seen := map[string]bool{}
	for i, r := range cfg.Rules {
		if k, m := r.check(cat); m != "" {
			return i, k, m
		}
		if seen[r.Name] {
			return i, "name", fmt.Sprintf("rule name %q used twice", r.Name)
		}
		seen[r.Name] = true
	}
	return -1, "", ""
}

func (r *Rule) check(cat *catalog.Catalog) (key, msg string) {
	switch {
	case !ruleName.MatchString(r.Name):
		return "name", fmt.Sprintf("rule name %q must be 1–63 lower-case letters, digits or '-', starting with a letter or digit", r.Name)
	case r.Kind > OrbitShare:
		return "kind", "unknown rule kind"
	case r.Kind != Signature && (r.Orbit < 0 || r.Orbit >= cat.NumOrbits()):
		return "orbit", fmt.Sprintf("orbit %d out of range 0..%d", r.Orbit, cat.NumOrbits()-1)
	case math.IsNaN(r.Fire) || math.IsInf(r.Fire, 0):
		return "fire", "fire must be a finite number"
	case r.Kind == Signature && (r.Fire <= 0 || r.Fire > 1):
		return "fire", fmt.Sprintf("fire %v out of range (0, 1] for a signature rule", r.Fire)
	case r.Kind == OrbitCount && r.Fire < 1:
		return "fire", fmt.Sprintf("fire %v out of range [1, ∞) for an orbit-count rule", r.Fire)
	case r.Kind == OrbitGrowth && r.Fire <= 1:
		return "fire", fmt.Sprintf("fire %v out of range (1, ∞) for an orbit-growth rule", r.Fire)
	case r.Kind == OrbitShare && (r.Fire <= 0 || r.Fire > 1):
		return "fire", fmt.Sprintf("fire %v out of range (0, 1] for an orbit-share rule", r.Fire)
	case r.Kind == OrbitShare && len(r.Against) == 0:
		return "against", "an orbit-share rule needs at least one orbit to set against"
	case r.Kind != OrbitShare && len(r.Against) > 0:
		return "against", fmt.Sprintf("against is only for orbit-share rules, not %s", r.Kind)
	case r.Kind == Signature && len(r.With) > 0:
		return "with", "with is only for orbit rules, not signature"
	case math.IsNaN(r.Rearm) || r.Rearm < 0 || r.Rearm >= r.Fire:
		return "rearm", fmt.Sprintf("rearm %v must be in [0, fire %v)", r.Rearm, r.Fire)
	case r.MinDegree < 0:
		return "min_degree", "min_degree must not be negative"
	case r.Cooldown < 0:
		return "cooldown", "cooldown must not be negative"
	}
	if msg := checkWeights("with", r.With, r.Orbit, nil, cat); msg != "" {
		return "with", msg
	}
	if msg := checkWeights("against", r.Against, r.Orbit, r.With, cat); msg != "" {
		return "against", msg
	}
	return "", ""
}

// checkWeights reports the first thing wrong with the weighted orbits ws
// listed under key: an orbit out of range, the rule's own orbit, one of
// the orbits of taken or an orbit twice, a weight not finite and > 0.
func checkWeights(key string, ws []OrbitWeight, own int, taken []OrbitWeight, cat *catalog.Catalog) string {
	for i, a := range ws {
		switch {
		case a.Orbit < 0 || a.Orbit >= cat.NumOrbits():
			return fmt.Sprintf("%s orbit %d out of range 0..%d", key, a.Orbit, cat.NumOrbits()-1)
		case a.Orbit == own:
			return fmt.Sprintf("%s lists the rule's own orbit %d", key, a.Orbit)
		case math.IsNaN(a.Weight) || math.IsInf(a.Weight, 0) || a.Weight <= 0:
			return fmt.Sprintf("%s weight %v of orbit %d must be a finite number > 0", key, a.Weight, a.Orbit)
		}
		for _, b := range ws[:i] {
			if b.Orbit == a.Orbit {
				return fmt.Sprintf("%s lists orbit %d twice", key, a.Orbit)
			}
		}
		for _, b := range taken {
			if b.Orbit == a.Orbit {
				return fmt.Sprintf("%s lists orbit %d, which with already counts", key, a.Orbit)
			}
		}
	}
	return ""
}
