package alert

import (
	"math"
	"slices"
	"sort"
	"time"

	"orbitwatch/delta/catalog"
	"orbitwatch/delta/gdv"
)

// Cut is the point of the log an evaluation belongs to: its sequence, its
// event-time watermark, and the wall-clock time of the evaluation (only
// copied into alerts).
type Cut struct {
	Seq       uint64
	EventTime time.Time
	WallTime  time.Time
}

// NodeChange is one node touched since the last cut, owned by the caller's
// shard. Now is its orbit vector at the cut. Baseline is, for
// BaselineLookback, its vector as of the latest cut whose watermark is ≤
// EventTime − Lookback (the caller's as-of read), or nil when the node did
// not exist then; it is ignored for BaselineDecayed. Both slices are only
// read during Evaluate.
type NodeChange struct {
	Node     string
	Degree   int
	Now      []uint64
	Baseline []uint64
}

// Stats count what an Evaluator did since it started (they are part of its
// serialised state).
type Stats struct {
	// Cuts and Nodes count Evaluate calls and the node changes given.
	Cuts, Nodes uint64
	// Emitted alerts were returned; Held ones were over MaxPerMinute
	// (their rule still counts as fired for hysteresis and cool-down);
	// Cooled counts scores at the fire level that a cool-down kept quiet.
	Emitted, Held, Cooled uint64
}

// Evaluator applies a Config at each cut. It is not safe for concurrent
// use; a worker calls it from its own goroutine.
type Evaluator struct {
	cfg    Config
	cat    *catalog.Catalog
	metric *gdv.Metric
	pairs  []int   // orbits of the 2-node graphlets: their sum is the degree
	decay  float64 // ln 2 / half-life in ns, for BaselineDecayed

	nodes map[string]*nodeState
	// Scratch for one node, reused so Evaluate allocates only for
	// alerts and for nodes it has not seen before.
	base, contrib []float64

	minute   int64 // event-time minute of the rate window
	inMinute int   // alerts emitted in it
	stats    Stats
}

// nodeState is what the Evaluator remembers of one node: hysteresis and
// cool-down per rule, and the decayed average for BaselineDecayed.
type nodeState struct {
	avg   []float64 // the baseline as of avgAt; nil until first seen (decayed mode only)
	prev  []uint64  // the vector the node has held since avgAt
	avgAt int64     // Unix ns
	rules []ruleState
}

type ruleState struct {
	fired   bool  // fired and not re-armed since
	hasLast bool  // last is set
	last    int64 // event time of the last firing, Unix ns
}

// New returns an Evaluator of cfg over cat's orbits. cfg must be valid (as
// ParseConfig and DefaultConfig return it); an invalid one panics.
func New(cfg Config, cat *catalog.Catalog) *Evaluator {
	if _, _, msg := cfg.check(cat); msg != "" {
		panic("alert: invalid config: " + msg)
	}
	cfg.Rules = append([]Rule(nil), cfg.Rules...)
	for i := range cfg.Rules {
		cfg.Rules[i].Against = append([]OrbitWeight(nil), cfg.Rules[i].Against...)
		cfg.Rules[i].With = append([]OrbitWeight(nil), cfg.Rules[i].With...)
	}
	n := cat.NumOrbits()
	e := &Evaluator{
		cfg: cfg, cat: cat, metric: gdv.ForCatalog(cat),
		nodes: make(map[string]*nodeState),
		base:  make([]float64, n), contrib: make([]float64, n),
		minute: math.MinInt64,
	}
	for _, o := range cat.Orbits {
		if cat.Graphlets[o.Graphlet].Nodes == 2 {
			e.pairs = append(e.pairs, o.ID)
		}
	}
	if cfg.Baseline == BaselineDecayed {
		e.decay = math.Ln2 / float64(cfg.HalfLife)
	}
	return e
}

// Config returns the configuration in use; the caller reads baselines at
// EventTime − Config().Lookback when Baseline is BaselineLookback.
func (e *Evaluator) Config() Config { return e.cfg }

// Stats returns the counters.
func (e *Evaluator) Stats() Stats { return e.stats }

// Evaluate scores every node change against every rule and returns the
// alerts of this cut, in the order of nodes, then rules (nil when none).
// It is deterministic: the same state and inputs give the same alerts.
//
// For each node and rule: a node below the rule's gates (degree, total
// count, the orbit's count) is not scored. A disarmed rule re-arms when
// the score is below Rearm. An armed rule fires when the score is ≥ Fire,
// unless the rule fired for the node less than Cooldown of event time ago
// (then it stays armed and Stats.Cooled counts it). A firing past
// MaxPerMinute alerts in the cut's event-time minute is held back
// (Stats.Held). A signature rule needs a baseline with a non-zero count
// and at least MinDegree neighbours (the sum of the baseline's 2-node
// orbit counts): a node that had nothing has no signature to shift from
// (orbit rules cover new accounts).
//
// With BaselineDecayed the node's baseline is the exponentially decayed
// average of the vectors it held over event time, up to but excluding this
// cut: with avg the average and prev the vector as of the node's previous
// evaluation, Δt the event time since, and a = 2^(−Δt/HalfLife),
//
//	baseline = a·avg + (1−a)·prev
//
// (prev held all through Δt, so it gets the weight of that time); then avg
// becomes the baseline and prev becomes Now. A node's first vector starts
// both, so it has no baseline at its first evaluation.
//
// Every Now must have the catalog's orbit count, and Baseline too when not
// nil.
func (e *Evaluator) Evaluate(cut Cut, nodes []NodeChange) []Alert {
	e.stats.Cuts++
	t := cut.EventTime.UnixNano()
	var out []Alert
	for i := range nodes {
		out = e.node(cut, t, &nodes[i], out)
	}
	return out
}

func (e *Evaluator) node(cut Cut, t int64, nc *NodeChange, out []Alert) []Alert {
	n := len(e.base)
	if len(nc.Now) != n || (nc.Baseline != nil && len(nc.Baseline) != n) {
		panic("alert: node vector length differs from the catalog's orbit count")
	}
	e.stats.Nodes++
	st := e.nodes[nc.Node]
	hasBase, baseTotal, baseDegree := e.loadBaseline(st, nc, t)
	var total uint64
	for _, c := range nc.Now {
		total += c // a sum past 2^64 only makes a gate pass that passes anyway
		if total < c {
			total = math.MaxUint64
		}
	}
	dist := e.metric.Between(nc.Now, e.base, e.contrib)
	for ri := range e.cfg.Rules {
		r := &e.cfg.Rules[ri]
		signed := hasBase && baseTotal > 0 && baseDegree >= float64(r.MinDegree)
		score, ok := e.score(r, nc, total, dist, signed)
		if !ok {
			continue
		}
		if st != nil && st.rules != nil && st.rules[ri].fired {
			if score < r.Rearm {
				st.rules[ri].fired = false
			}
			continue
		}
		if score < r.Fire {
			continue
		}
		st = e.state(nc.Node, st)
		rs := &st.rules[ri]
		if rs.hasLast && t-rs.last < int64(r.Cooldown) {
			e.stats.Cooled++
			continue
		}
		rs.fired, rs.hasLast, rs.last = true, true, t
		if !e.admit(t) {
			e.stats.Held++
			continue
		}
		e.stats.Emitted++
		out = append(out, e.alert(cut, nc, r, score, hasBase))
	}
	if e.cfg.Baseline == BaselineDecayed {
		st = e.state(nc.Node, st)
		e.blend(st, nc.Now, t)
	}
	return out
}

// loadBaseline fills e.base with nc's baseline (zeros when it has none)
// and returns whether it has one, its total count and its degree (the sum
// of its 2-node orbit counts).
func (e *Evaluator) loadBaseline(st *nodeState, nc *NodeChange, t int64) (has bool, total, degree float64) {
	switch {
	case e.cfg.Baseline == BaselineLookback && nc.Baseline != nil:
		for i, c := range nc.Baseline {
			e.base[i] = float64(c)
			total += e.base[i]
		}
		has = true
	case e.cfg.Baseline == BaselineDecayed && st != nil && st.avg != nil:
		total = e.decayed(st, t)
		has = true
	default:
		clear(e.base)
	}
	for _, o := range e.pairs {
		degree += e.base[o]
	}
	return has, total, degree
}

// score returns rule r's measure for nc, or ok false when a gate stops it.
func (e *Evaluator) score(r *Rule, nc *NodeChange, total uint64, dist float64, signed bool) (float64, bool) {
	if nc.Degree < r.MinDegree || total < r.MinTotal {
		return 0, false
	}
	if r.Kind == Signature {
		return dist, signed
	}
	c := weighted(nc.Now, r.Orbit, r.With)
	gate := c >= float64(r.MinCount)
	switch r.Kind {
	case OrbitCount:
		return c, gate
	case OrbitGrowth:
		return c / math.Max(weighted(e.base, r.Orbit, r.With), 1), gate
	default:
		return shareOf(c, nc.Now, r.Against), gate
	}
}

// weighted returns v_o + Σ_w w·v_w over the orbits of with: a rule's
// count (Rule.With).
func weighted[T uint64 | float64](v []T, o int, with []OrbitWeight) float64 {
	c := float64(v[o])
	for _, w := range with {
		c += w.Weight * float64(v[w.Orbit])
	}
	return c
}

// Share returns the OrbitShare score of vector v for orbit o against the
// weighted orbits of against:
//
//	v_o / (v_o + Σ_a w_a·v_a)
//
// and 0 when that sum is 0. Every orbit must be an index of v.
func Share(v []uint64, o int, against []OrbitWeight) float64 {
	return shareOf(float64(v[o]), v, against)
}

// shareOf returns c / (c + Σ_a w_a·v_a), 0 when that sum is 0.
func shareOf(c float64, v []uint64, against []OrbitWeight) float64 {
	sum := c
	for _, a := range against {
		sum += a.Weight * float64(v[a.Orbit])
	}
	if sum == 0 {
		return 0
	}
	return c / sum
}

// state returns st, or a new state for node when st is nil.
func (e *Evaluator) state(node string, st *nodeState) *nodeState {
	if st == nil {
		st = &nodeState{}
		e.nodes[node] = st
	}
	if st.rules == nil {
		st.rules = make([]ruleState, len(e.cfg.Rules))
	}
	return st
}

// admit reports whether one more alert fits the cap of the event-time
// minute of t, and counts it.
func (e *Evaluator) admit(t int64) bool {
	m := t / int64(time.Minute)
	if t < 0 && t%int64(time.Minute) != 0 {
		m-- // floor, for times before 1970
	}
	if m != e.minute {
		e.minute, e.inMinute = m, 0
	}
	if e.cfg.MaxPerMinute > 0 && e.inMinute >= e.cfg.MaxPerMinute {
		return false
	}
	e.inMinute++
	return true
}

// decayed fills e.base with st's decayed baseline at t and returns its sum.
func (e *Evaluator) decayed(st *nodeState, t int64) float64 {
	a := 1.0
	if dt := t - st.avgAt; dt > 0 {
		a = math.Exp(-e.decay * float64(dt))
	}
	sum := 0.0
	for i, x := range st.avg {
		e.base[i] = a*x + (1-a)*float64(st.prev[i])
		sum += e.base[i]
	}
	return sum
}

// blend moves st on to t: avg becomes the baseline just computed (or Now
// at a node's first evaluation) and prev becomes Now.
func (e *Evaluator) blend(st *nodeState, now []uint64, t int64) {
	if st.avg == nil {
		st.avg, st.prev = make([]float64, len(now)), make([]uint64, len(now))
		for i, c := range now {
			st.avg[i] = float64(c)
		}
	} else {
		copy(st.avg, e.base)
	}
	copy(st.prev, now)
	st.avgAt = max(st.avgAt, t)
}

// alert builds the alert of rule r for nc; e.contrib and e.base still hold
// nc's per-orbit distances and baseline.
func (e *Evaluator) alert(cut Cut, nc *NodeChange, r *Rule, score float64, hasBase bool) Alert {
	a := Alert{
		ID: AlertID(r.Name, nc.Node, cut.Seq), Rule: r.Name, Kind: r.Kind.String(), Node: nc.Node,
		Seq: cut.Seq, EventTime: cut.EventTime.UTC(), Score: score, Fire: r.Fire,
		Baseline: "none", Degree: nc.Degree,
	}
	if !cut.WallTime.IsZero() {
		a.DetectedAt = cut.WallTime.UTC()
	}
	if hasBase {
		a.Baseline = e.cfg.Baseline.String()
	}
	// An orbit rule lists its own orbits first: Orbit, then those of With
	// that the node holds now or held before.
	var own []int
	if r.Kind != Signature {
		own = append(own, r.Orbit)
		for _, w := range r.With {
			if nc.Now[w.Orbit] > 0 || e.base[w.Orbit] > 0 {
				own = append(own, w.Orbit)
			}
		}
	}
	order := make([]int, 0, len(e.contrib))
	for i, c := range e.contrib {
		if c > 0 && !slices.Contains(own, i) {
			order = append(order, i)
		}
	}
	sort.SliceStable(order, func(x, y int) bool { return e.contrib[order[x]] > e.contrib[order[y]] })
	order = append(own, order...)
	for _, i := range order[:min(len(order), e.cfg.TopOrbits)] {
		o := e.cat.Orbits[i]
		a.Orbits = append(a.Orbits, OrbitMove{
			Orbit: i, Name: o.Name, Graphlet: e.cat.Graphlets[o.Graphlet].Name,
			Before: e.base[i], After: nc.Now[i],
		})
	}
	return a
}

// Forget drops the state of every node whose last firing (any rule) and,
// for BaselineDecayed, last evaluation are before t, and returns how many
// it dropped. Such a node is afterwards treated as never seen: armed, out
// of cool-down, and (decayed) without a baseline until its next
// evaluation. A worker calls it now and then with, for example, its
// watermark minus the window, so that the state of accounts gone quiet
// does not pile up.
func (e *Evaluator) Forget(t time.Time) int {
	cut := t.UnixNano()
	n := 0
	for id, st := range e.nodes {
		if st.avg != nil && st.avgAt >= cut {
			continue
		}
		recent := false
		for _, rs := range st.rules {
			recent = recent || (rs.hasLast && rs.last >= cut)
		}
		if !recent {
			delete(e.nodes, id)
			n++
		}
	}
	return n
}

// Nodes returns how many nodes the Evaluator keeps state for.
func (e *Evaluator) Nodes() int { return len(e.nodes) }
