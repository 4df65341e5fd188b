package demo

import (
	"fmt"
	"math/rand/v2"
	"slices"
	"time"

	"orbitwatch/bench/gen"
	"orbitwatch/delta"
	"orbitwatch/stream"
)

// Config describes the scenario. The opening puts every household's first
// payments (payroll, a few shops, a partner) at Start; the steady traffic
// then runs for Steady, one payment every Gap of event time; the patterns
// are planted from twenty minutes into it (see Generate).
type Config struct {
	Households, Shops, Payrolls int
	Start                       time.Time
	Steady, Gap                 time.Duration
	Seed                        uint64
}

// DefaultConfig is the demo's scenario: 3000 households, 60 shops, 3
// payroll providers, one simulated day of steady traffic, a payment every
// 10 s of event time (8640 payments a day after about 13k opening ones).
func DefaultConfig() Config {
	return Config{Households: 3000, Shops: 60, Payrolls: 3, Start: time.Date(2026, 3, 2, 6, 0, 0, 0, time.UTC),
		Steady: 24 * time.Hour, Gap: 10 * time.Second, Seed: 1}
}

// SmallConfig is a scenario for tests: 600 households, 15 shops, 2 payroll
// providers, five simulated hours of steady traffic (the patterns end
// 3 h 45 min in).
func SmallConfig() Config {
	c := DefaultConfig()
	c.Households, c.Shops, c.Payrolls, c.Steady = 600, 15, 2, 5*time.Hour
	return c
}

// Pattern is one planted structure, the ground truth of the evaluation.
type Pattern struct {
	// Name is short ("fan-out", "cycle-3", "dispute-ring", "hub", …);
	// Title says in plain words what was planted.
	Name, Title string
	// Nodes are every node of the pattern; Expect those whose alert shows
	// the pattern was found (nil for a quiet pattern).
	Nodes, Expect []string
	// Quiet marks a normal pattern that must raise no alert, whatever
	// the graph kind.
	Quiet bool
	// FoundBy are the counting configurations whose demo rules are to
	// find the pattern, each with the rule meant to (empty for a quiet
	// pattern). Under other configurations the pattern is neither to be
	// found nor a source of false alerts.
	FoundBy []Finder
	// First and Complete are the event times of its first and last
	// payment; FirstIndex and CompleteIndex their places in Events.
	First, Complete           time.Time
	FirstIndex, CompleteIndex int
}

// Finder is a counting configuration that shows a pattern: a graph kind,
// the least graphlet size (max nodes) whose orbits tell the pattern, and
// the demo rule that is to fire on an expected node.
type Finder struct {
	Kind     delta.Kind
	MinNodes int
	Rule     string
}

// FoundWith returns the rule that is to find p when counting kind on
// graphlets of up to maxNodes nodes, and whether there is one.
func (p *Pattern) FoundWith(kind delta.Kind, maxNodes int) (rule string, ok bool) {
	for _, f := range p.FoundBy {
		if f.Kind == kind && maxNodes >= f.MinNodes {
			return f.Rule, true
		}
	}
	return "", false
}

// Scenario is the generated stream with what is planted in it.
type Scenario struct {
	Config Config
	// Events are every payment and dispute in log order, all adds with
	// event times that never go back and ids "demo-<seed>-<index>"; the
	// first Opening of them are the opening, all at Config.Start. A
	// dispute (chargeback, or a payment returned on a fraud report) is a
	// negative event (Neg) from the party that pays back to the one that
	// disputed: the kinds that ignore signs read it as a reverse payment.
	Events   []stream.Event
	Opening  int
	Patterns []Pattern
	// Background counts the nodes of the stream outside every pattern
	// but the quiet ones (the hub and the payroll provider are background
	// traffic that must stay quiet).
	Background int
}

// Pattern returns the planted pattern of that name; it panics when there
// is none.
func (s *Scenario) Pattern(name string) Pattern {
	for _, p := range s.Patterns {
		if p.Name == name {
			return p
		}
	}
	panic("demo: no pattern named " + name)
}

// Member reports the pattern a node belongs to ("" for background).
func (s *Scenario) Member(node string) string {
	for _, p := range s.Patterns {
		if slices.Contains(p.Nodes, node) {
			return p.Name
		}
	}
	return ""
}

// Expected returns the patterns the demo rules of kind on up to maxNodes
// nodes are to find, and the quiet ones, in the scenario's order.
func (s *Scenario) Expected(kind delta.Kind, maxNodes int) []Pattern {
	var out []Pattern
	for _, p := range s.Patterns {
		if _, ok := p.FoundWith(kind, maxNodes); ok || p.Quiet {
			out = append(out, p)
		}
	}
	return out
}

// builder holds the background's state while the stream is made.
type builder struct {
	r        *rand.Rand
	c        Config
	pop      gen.Population
	name     []string
	house    []uint32   // background household node ids
	shops    [][]uint32 // by position in house: the shops it has paid
	employer []int32    // payroll node id or −1
	partner  []int32    // position in house of the partner, or −1
	shopPerm []uint32   // shop node id by popularity rank
	zipf     *rand.Zipf
	hub      uint32
	payroll  uint32 // the biggest payroll provider
	events   []timed
}

type timed struct {
	at       time.Time
	src, dst uint32
	neg      bool
	pattern  int // 1 + index of the planted pattern, 0 for the background
}

// chargebackShare is the share of steady events that are a household's
// chargeback of a purchase at a shop it paid: about one dispute per hundred
// payments, a rate of our own choosing for the fiction.
const chargebackShare = 0.01

// Generate makes the scenario. Background: every household pays two to
// five shops (popularity Zipf, s = 1.1, v = 4, over a shuffled shop order),
// 60 % are paid by a payroll provider (two thirds of them by the biggest), and
// households are paired off with a partner they pay with probability 0.3.
// Steady events are: 1 % chargebacks (a shop pays a household back on a
// disputed purchase: a negative event), 9 % refunds (the shop paying the
// household back), 12 % a purchase at a shop new to the household, 10 % a
// purchase at the hub (the most popular shop, which thus keeps gaining
// customers), 10 % payroll, 8 % partner transfers, the rest repeat
// purchases. Shops and payroll providers never pay each other and
// partners pair off, so the background has no K4; only shops pay
// households back, and only households they were paid by, so every tie
// that goes both ways is a purchase and its refund or chargeback, and the
// background has no directed cycle whose ties all go one way.
//
// The planted patterns are described at plant; each is on fresh accounts
// or households drawn for it alone, so that patterns do not touch each
// other. Steady must be at least 4 h so that every pattern is complete.
func Generate(c Config) *Scenario {
	if c.Households < 300 || c.Shops < 5 || c.Payrolls < 1 || c.Gap <= 0 || c.Steady < 4*time.Hour {
		panic(fmt.Sprintf("demo: invalid config %+v", c))
	}
	b := &builder{r: rand.New(rand.NewPCG(c.Seed, 0x6f7262)), c: c, pop: gen.Population{Accounts: c.Households + freshAccounts, Shops: c.Shops, Payrolls: c.Payrolls}}
	for id := range uint32(b.pop.Nodes()) {
		b.name = append(b.name, string(b.pop.AppendName(nil, id)))
	}
	accts := b.r.Perm(b.pop.Accounts)
	fresh := accts[:freshAccounts]
	for _, a := range accts[freshAccounts:] {
		b.house = append(b.house, uint32(a))
	}
	slices.Sort(b.house)
	b.shopPerm = make([]uint32, c.Shops)
	for i, s := range b.r.Perm(c.Shops) {
		b.shopPerm[i] = b.pop.ShopID(s)
	}
	b.hub = b.shopPerm[0]
	b.payroll = b.pop.PayrollID(0)
	b.zipf = rand.NewZipf(b.r, 1.1, 4, uint64(c.Shops-1))
	b.opening()
	opening := len(b.events)
	b.steady()
	pats := b.plant(fresh)
	slices.SortStableFunc(b.events, func(x, y timed) int {
		if d := x.at.Compare(y.at); d != 0 {
			return d
		}
		return min(x.pattern, 1) - min(y.pattern, 1) // planted after background at equal times
	})
	s := &Scenario{Config: c, Opening: opening, Patterns: pats}
	for i, e := range b.events {
		s.Events = append(s.Events, stream.Event{ID: fmt.Sprintf("demo-%d-%d", c.Seed, i), TS: e.at, HasTS: true, Op: stream.OpAdd,
			Neg: e.neg, Src: b.name[e.src], Dst: b.name[e.dst], Line: i + 1})
	}
	s.locate(b.events)
	seen := map[string]bool{}
	for _, e := range s.Events {
		seen[e.Src], seen[e.Dst] = true, true
	}
	for n := range seen {
		if m := s.Member(n); m == "" || s.Pattern(m).Quiet {
			s.Background++
		}
	}
	return s
}

func (b *builder) add(at time.Time, src, dst uint32) {
	b.events = append(b.events, timed{at: at, src: src, dst: dst})
}

// newShop returns a shop household i has not paid yet, by popularity, or
// false after a few draws that all hit known shops.
func (b *builder) newShop(i int) (uint32, bool) {
	for range 8 {
		s := b.shopPerm[b.zipf.Uint64()]
		if !slices.Contains(b.shops[i], s) {
			return s, true
		}
	}
	return 0, false
}

func (b *builder) opening() {
	c := b.c
	n := len(b.house)
	b.shops = make([][]uint32, n)
	b.employer = make([]int32, n)
	b.partner = make([]int32, n)
	for i, h := range b.house {
		b.employer[i], b.partner[i] = -1, -1
		if b.r.Float64() < 0.6 {
			p := b.payroll
			if c.Payrolls > 1 && b.r.Float64() >= 2.0/3 {
				p = b.pop.PayrollID(1 + b.r.IntN(c.Payrolls-1))
			}
			b.employer[i] = int32(p)
			b.add(c.Start, p, h)
		}
		for range 2 + b.r.IntN(4) {
			if s, ok := b.newShop(i); ok {
				b.shops[i] = append(b.shops[i], s)
				b.add(c.Start, h, s)
			}
		}
	}
	order := b.r.Perm(n)
	for k := 0; k+1 < n; k += 2 {
		i, j := order[k], order[k+1]
		b.partner[i], b.partner[j] = int32(j), int32(i)
		if b.r.Float64() < 0.3 {
			b.add(c.Start, b.house[i], b.house[j])
		}
	}
}

func (b *builder) steady() {
	c := b.c
	steps := int(c.Steady / c.Gap)
	for k := range steps {
		at := c.Start.Add(time.Duration(k+1) * c.Gap)
		i := b.r.IntN(len(b.house))
		h := b.house[i]
		x := b.r.Float64()
		switch {
		case x < chargebackShare && len(b.shops[i]) > 0:
			b.events = append(b.events, timed{at: at, src: b.shops[i][b.r.IntN(len(b.shops[i]))], dst: h, neg: true})
		case x < 0.10 && len(b.shops[i]) > 0:
			b.add(at, b.shops[i][b.r.IntN(len(b.shops[i]))], h)
		case x < 0.22:
			if s, ok := b.newShop(i); ok {
				b.shops[i] = append(b.shops[i], s)
				b.add(at, h, s)
				continue
			}
			fallthrough
		case x < 0.32:
			if !slices.Contains(b.shops[i], b.hub) {
				b.shops[i] = append(b.shops[i], b.hub)
			}
			b.add(at, h, b.hub)
		case x < 0.42 && b.employer[i] >= 0:
			b.add(at, uint32(b.employer[i]), h)
		case x >= 0.92 && b.partner[i] >= 0:
			b.add(at, h, b.house[b.partner[i]])
		case len(b.shops[i]) > 0:
			b.add(at, h, b.shops[i][b.r.IntN(len(b.shops[i]))])
		default:
			b.add(at, h, b.hub)
			b.shops[i] = append(b.shops[i], b.hub)
		}
	}
}

// locate fills each pattern's first and last event: for the hub its
// whole traffic, for the others the events planted for them.
func (s *Scenario) locate(events []timed) {
	for pi := range s.Patterns {
		p := &s.Patterns[pi]
		p.FirstIndex, p.CompleteIndex = -1, -1
		for i, e := range s.Events {
			in := events[i].pattern == pi+1
			if p.Name == "hub" {
				in = e.Src == p.Nodes[0] || e.Dst == p.Nodes[0]
			}
			if !in {
				continue
			}
			if p.FirstIndex < 0 {
				p.FirstIndex = i
			}
			p.CompleteIndex = i
		}
		p.First, p.Complete = s.Events[p.FirstIndex].TS, s.Events[p.CompleteIndex].TS
	}
}
