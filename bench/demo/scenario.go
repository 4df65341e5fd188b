package demo

import (
	"fmt"
	"math/rand/v2"
	"slices"
	"time"

	"orbitwatch/bench/gen"
	"orbitwatch/stream"
)

// Config describes the scenario. The opening puts every household's first
// payments (payroll, a few shops, a partner) at Start; the steady traffic
// then runs for Steady, one payment every Gap of event time; the patterns
// are planted from one hour into it (see Generate).
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
// 3 h 40 min in).
func SmallConfig() Config {
	c := DefaultConfig()
	c.Households, c.Shops, c.Payrolls, c.Steady = 600, 15, 2, 5*time.Hour
	return c
}

// Pattern is one planted structure, the ground truth of the evaluation.
type Pattern struct {
	// Name is short ("fan-out", "ring", "clique", "hub"); Title says in
	// plain words what was planted.
	Name, Title string
	// Nodes are every node of the pattern; Expect those whose alert shows
	// the pattern was found (nil for the quiet hub).
	Nodes, Expect []string
	// Quiet marks a normal pattern that must raise no alert.
	Quiet bool
	// First and Complete are the event times of its first and last
	// payment; FirstIndex and CompleteIndex their places in Events.
	First, Complete           time.Time
	FirstIndex, CompleteIndex int
}

// Scenario is the generated stream with what is planted in it.
type Scenario struct {
	Config Config
	// Events are every payment in log order, all adds with event times
	// that never go back and ids "demo-<seed>-<index>"; the first Opening
	// of them are the opening, all at Config.Start.
	Events   []stream.Event
	Opening  int
	Patterns []Pattern
	// Background counts the nodes of the stream outside every pattern but
	// the hub (the hub is background traffic that must stay quiet).
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

// planted account counts: the mule, its inflow source is a household;
// ring 2 senders and 5 receivers; clique 5.
const (
	muleOut    = 3  // payees of the mule in its first, ordinary hour
	fanOut     = 30 // payees of the fan-out
	ringSend   = 2
	ringRecv   = 5
	cliqueSize = 5
	planted    = 1 + ringSend + ringRecv + cliqueSize
)

// builder holds the background's state while the stream is made.
type builder struct {
	r        *rand.Rand
	pop      gen.Population
	name     []string
	house    []uint32   // background household node ids
	shops    [][]uint32 // by position in house: the shops it has paid
	employer []int32    // payroll node id or −1
	partner  []int32    // position in house of the partner, or −1
	shopPerm []uint32   // shop node id by popularity rank
	zipf     *rand.Zipf
	hub      uint32
	events   []timed
}

type timed struct {
	at       time.Time
	src, dst uint32
	order    int // patterns after background at equal times
}

// Generate makes the scenario. Background: every household pays two to
// five shops (popularity Zipf, s = 1.1, v = 4, over a shuffled shop order),
// 60 % are paid by a payroll provider, and households are paired off with
// a partner they pay with probability 0.3. Steady payments are: 50 %
// repeat purchases, 10 % refunds (the shop paying the household back),
// 12 % a purchase at a shop new to the household, 10 % a purchase at the
// hub (the most popular shop, which thus keeps gaining customers),
// 10 % payroll, 8 % partner transfers. Shops and payroll providers never
// pay each other and partners pair off, so the background has no K4.
//
// Planted, on fresh accounts at random account numbers:
//
//   - fan-out: a mule account is paid by a household 60 min in and pays 3
//     households in the next 3 min; from 2 h 15 min it pays 30 more
//     households, one a minute;
//   - ring: from 2 h 50 min two accounts each pay the same five accounts,
//     a payment every 2 min (K_{2,5}: ten 4-cycles through each sender);
//   - clique: from 3 h 15 min five accounts pay each other, every pair,
//     a payment every 3 min (K5: four K4s through each);
//   - hub: the busiest shop, busy but normal.
//
// Steady must be at least 4 h so that every pattern is complete.
func Generate(c Config) *Scenario {
	if c.Households < 100 || c.Shops < 5 || c.Payrolls < 1 || c.Gap <= 0 || c.Steady < 4*time.Hour {
		panic(fmt.Sprintf("demo: invalid config %+v", c))
	}
	b := &builder{r: rand.New(rand.NewPCG(c.Seed, 0x6f7262)), pop: gen.Population{Accounts: c.Households + planted, Shops: c.Shops, Payrolls: c.Payrolls}}
	for id := range uint32(b.pop.Nodes()) {
		b.name = append(b.name, string(b.pop.AppendName(nil, id)))
	}
	accts := b.r.Perm(b.pop.Accounts)
	fresh := accts[:planted]
	for _, a := range accts[planted:] {
		b.house = append(b.house, uint32(a))
	}
	slices.Sort(b.house)
	b.shopPerm = make([]uint32, c.Shops)
	for i, s := range b.r.Perm(c.Shops) {
		b.shopPerm[i] = b.pop.ShopID(s)
	}
	b.hub = b.shopPerm[0]
	b.zipf = rand.NewZipf(b.r, 1.1, 4, uint64(c.Shops-1))
	b.opening(c)
	opening := len(b.events)
	b.steady(c)
	pats := b.plant(c, fresh)
	slices.SortStableFunc(b.events, func(x, y timed) int {
		if d := x.at.Compare(y.at); d != 0 {
			return d
		}
		return x.order - y.order
	})
	s := &Scenario{Config: c, Opening: opening}
	for i, e := range b.events {
		s.Events = append(s.Events, stream.Event{ID: fmt.Sprintf("demo-%d-%d", c.Seed, i), TS: e.at, HasTS: true, Op: stream.OpAdd,
			Src: b.name[e.src], Dst: b.name[e.dst], Line: i + 1})
	}
	s.Patterns = pats
	s.locate()
	seen := map[string]bool{}
	for _, e := range s.Events {
		seen[e.Src], seen[e.Dst] = true, true
	}
	for n := range seen {
		if m := s.Member(n); m == "" || m == "hub" {
			s.Background++
		}
	}
	return s
}

func (b *builder) add(at time.Time, src, dst uint32, order int) {
	b.events = append(b.events, timed{at, src, dst, order})
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

func (b *builder) opening(c Config) {
	n := len(b.house)
	b.shops = make([][]uint32, n)
	b.employer = make([]int32, n)
	b.partner = make([]int32, n)
	for i, h := range b.house {
		b.employer[i], b.partner[i] = -1, -1
		if b.r.Float64() < 0.6 {
			b.employer[i] = int32(b.pop.PayrollID(b.r.IntN(c.Payrolls)))
			b.add(c.Start, uint32(b.employer[i]), h, 0)
		}
		for range 2 + b.r.IntN(4) {
			if s, ok := b.newShop(i); ok {
				b.shops[i] = append(b.shops[i], s)
				b.add(c.Start, h, s, 0)
			}
		}
	}
	order := b.r.Perm(n)
	for k := 0; k+1 < n; k += 2 {
		i, j := order[k], order[k+1]
		b.partner[i], b.partner[j] = int32(j), int32(i)
		if b.r.Float64() < 0.3 {
			b.add(c.Start, b.house[i], b.house[j], 0)
		}
	}
}

func (b *builder) steady(c Config) {
	steps := int(c.Steady / c.Gap)
	for k := range steps {
		at := c.Start.Add(time.Duration(k+1) * c.Gap)
		i := b.r.IntN(len(b.house))
		h := b.house[i]
		x := b.r.Float64()
		switch {
		case x < 0.10 && len(b.shops[i]) > 0:
			b.add(at, b.shops[i][b.r.IntN(len(b.shops[i]))], h, 0)
		case x < 0.22:
			if s, ok := b.newShop(i); ok {
				b.shops[i] = append(b.shops[i], s)
				b.add(at, h, s, 0)
				continue
			}
			fallthrough
		case x < 0.32:
			if !slices.Contains(b.shops[i], b.hub) {
				b.shops[i] = append(b.shops[i], b.hub)
			}
			b.add(at, h, b.hub, 0)
		case x < 0.42 && b.employer[i] >= 0:
			b.add(at, uint32(b.employer[i]), h, 0)
		case x >= 0.92 && b.partner[i] >= 0:
			b.add(at, h, b.house[b.partner[i]], 0)
		case len(b.shops[i]) > 0:
			b.add(at, h, b.shops[i][b.r.IntN(len(b.shops[i]))], 0)
		default:
			b.add(at, h, b.hub, 0)
			b.shops[i] = append(b.shops[i], b.hub)
		}
	}
}

// households returns k distinct background households, drawn at random.
func (b *builder) households(k int) []uint32 {
	out := make([]uint32, 0, k)
	for _, i := range b.r.Perm(len(b.house))[:k] {
		out = append(out, b.house[i])
	}
	return out
}

func (b *builder) plant(c Config, fresh []int) []Pattern {
	at := func(d time.Duration) time.Time { return c.Start.Add(d) }
	names := func(ids []uint32) []string {
		out := make([]string, len(ids))
		for i, x := range ids {
			out[i] = b.name[x]
		}
		return out
	}
	ids := make([]uint32, len(fresh))
	for i, a := range fresh {
		ids[i] = uint32(a)
	}
	mule, senders, receivers, clique := ids[0], ids[1:1+ringSend], ids[1+ringSend:1+ringSend+ringRecv], ids[1+ringSend+ringRecv:]

	payees := b.households(1 + muleOut + fanOut)
	b.add(at(time.Hour), payees[0], mule, 1)
	for k, p := range payees[1 : 1+muleOut] {
		b.add(at(time.Hour+time.Duration(k+1)*time.Minute), mule, p, 1)
	}
	for k, p := range payees[1+muleOut:] {
		b.add(at(2*time.Hour+15*time.Minute+time.Duration(k)*time.Minute), mule, p, 1)
	}
	fan := Pattern{Name: "fan-out", Title: "a mule account that, an hour after opening, pays 30 households in half an hour",
		Nodes: append([]string{b.name[mule]}, names(payees)...), Expect: []string{b.name[mule]}}

	t := 2*time.Hour + 50*time.Minute
	for _, s := range senders {
		for _, r := range receivers {
			b.add(at(t), s, r, 1)
			t += 2 * time.Minute
		}
	}
	ring := Pattern{Name: "ring", Title: "two accounts paying the same five accounts (ten 4-cycles through each sender)",
		Nodes: names(append(slices.Clone(senders), receivers...)), Expect: names(senders)}

	t = 3*time.Hour + 15*time.Minute
	for i, x := range clique {
		for _, y := range clique[i+1:] {
			b.add(at(t), x, y, 1)
			t += 3 * time.Minute
		}
	}
	cl := Pattern{Name: "clique", Title: "five accounts that all pay each other (K5: four K4s through each)",
		Nodes: names(clique), Expect: names(clique)}

	hub := Pattern{Name: "hub", Title: "the busiest shop: new customers all day, busy but normal",
		Nodes: []string{b.name[b.hub]}, Quiet: true}
	return []Pattern{fan, ring, cl, hub}
}

// locate fills each pattern's first and last payment from the events:
// for the hub its whole traffic, for the others the payments among their
// own nodes and, for the fan-out, the mule's payments.
func (s *Scenario) locate() {
	for pi := range s.Patterns {
		p := &s.Patterns[pi]
		p.FirstIndex, p.CompleteIndex = -1, -1
		for i, e := range s.Events {
			in := false
			switch p.Name {
			case "hub":
				in = e.Src == p.Nodes[0] || e.Dst == p.Nodes[0]
			case "fan-out":
				in = e.Src == p.Nodes[0] || e.Dst == p.Nodes[0]
			default:
				in = slices.Contains(p.Nodes, e.Src) && slices.Contains(p.Nodes, e.Dst)
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
