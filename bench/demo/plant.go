package demo

import (
	"slices"
	"time"

	"orbitwatch/delta"
)

// Sizes of the planted patterns.
const (
	muleOut     = 3  // payees of the mule in its first, ordinary hour
	fanOut      = 30 // payees of the fan-out
	ringSend    = 2
	ringRecv    = 5
	cliqueSize  = 5
	passIn      = 6  // payers of the pass-through account
	passOut     = 8  // its payees
	fanIn       = 25 // payers of the collection account
	disputers   = 5  // members of the dispute ring
	disputed    = 3  // shops each member buys at and charges back
	starPaid    = 20 // customers of the merchant with a star of chargebacks
	starBack    = 14 // of them, those who charge back
	goBuyers    = 4  // buyers dealing through the go-between
	goSellers   = 4  // sellers it pays
	goPerBuyer  = 2  // sellers each buyer pays and then disputes
	staffShare  = 20 // the payroll provider's new client has Households/staffShare staff
	cycleShops  = 2  // shops each member of a cycle of funds pays first
	plantedHome = 1 + muleOut + fanOut + passIn + passOut + fanIn + starPaid + goBuyers

	// freshAccounts are the accounts outside the households that the
	// patterns are planted on: the mule, the ring, the clique, the two
	// cycles, the pass-through account, the collection account and the
	// account it forwards to, the dispute ring, the merchant with
	// chargebacks, the go-between and its sellers.
	freshAccounts = 1 + ringSend + ringRecv + cliqueSize + 3 + 4 + 1 + 2 + disputers + 1 + 1 + goSellers
)

// hm is h hours and m minutes.
func hm(h, m int) time.Duration { return time.Duration(h)*time.Hour + time.Duration(m)*time.Minute }

// planter adds the events of one pattern at a time, marked with it.
type planter struct {
	b     *builder
	pats  []Pattern
	fresh []uint32 // fresh accounts not yet used
	homes []uint32 // households drawn for patterns, not yet used
}

// pay adds a payment (or, neg, a dispute) of the pattern being planted,
// at d after the start.
func (p *planter) pay(d time.Duration, src, dst uint32, neg bool) {
	p.b.events = append(p.b.events, timed{at: p.b.c.Start.Add(d), src: src, dst: dst, neg: neg, pattern: len(p.pats) + 1})
}

// take returns the next k fresh accounts.
func (p *planter) take(k int) []uint32 {
	out := p.fresh[:k:k]
	p.fresh = p.fresh[k:]
	return out
}

// households returns the next k households drawn for patterns.
func (p *planter) households(k int) []uint32 {
	out := p.homes[:k:k]
	p.homes = p.homes[k:]
	return out
}

func (p *planter) names(ids ...uint32) []string {
	out := make([]string, len(ids))
	for i, x := range ids {
		out[i] = p.b.name[x]
	}
	return out
}

func (p *planter) done(pat Pattern) { p.pats = append(p.pats, pat) }

// shopsOf returns k distinct shops drawn by popularity.
func (p *planter) shopsOf(k int) []uint32 {
	var out []uint32
	for len(out) < k {
		if s := p.b.shopPerm[p.b.zipf.Uint64()]; !slices.Contains(out, s) {
			out = append(out, s)
		}
	}
	return out
}

// plant adds the planted patterns on the fresh accounts and on households
// drawn for them alone, and returns them. Times are after the start of
// the steady traffic:
//
//   - fan-out: a mule account is paid by a household 60 min in and pays 3
//     households in the next 3 min; from 2 h 15 min it pays 30 more
//     households, one a minute (a fan-out distribution; in the directed
//     view also a pass-through);
//   - ring: from 2 h 50 min two accounts each pay the same five accounts,
//     a payment every 2 min (K_{2,5}: ten 4-cycles through each sender);
//   - clique: from 3 h 15 min five accounts pay each other, every pair,
//     a payment every 3 min (K5: four K4s through each), the earlier
//     account paying the later so that no money goes round;
//   - cycle-3: three accounts that each paid two shops at 30 min pass
//     money round, A→B→C→A, at 1 h 30, 1 h 35 and 1 h 40 min, and again
//     an hour later;
//   - cycle-4: four such accounts pass money round, A→B→C→D→A, from
//     1 h 50 min, one payment every 5 min;
//   - pass-through: from 2 h an account is paid by six households, each
//     payment followed 2 min later by one to another household, 5 min
//     apart, then pays two more (eight payees by 2 h 33 min);
//   - fan-in: from 1 h 10 min 25 households pay a collection account,
//     one a minute, which pays one account at 1 h 40 min;
//   - dispute-ring: five accounts pay each other (every pair, the earlier
//     paying the later) from 40 min, buy at the same three shops of
//     middling popularity from 1 h, and charge every purchase back from
//     3 h, a dispute every 2 min (a group that pays each other and
//     disputes outsiders);
//   - chargeback-star: from 20 min an account selling online is paid by
//     20 households, one every 2 min; from 2 h 40 min 14 of them charge
//     back, one every 3 min (a merchant at the centre of a star of
//     chargebacks);
//   - go-between: four households pay an account from 1 h 15 min, which
//     pays four sellers from 1 h 20 min; each household then pays two of
//     the sellers (from 1 h 30 min) and from 3 h 20 min reports both for
//     fraud, and each payment is returned (a go-between whose
//     counterparties dispute each other);
//   - hub: the busiest shop, busy but normal (quiet);
//   - payroll: the biggest payroll provider, which pays about two thirds
//     of the employed households and from 2 h 30 min takes on a new
//     client, paying its Households/20 staff (households with no employer
//     until then) one every 20 s: busy and growing, but normal (quiet).
func (b *builder) plant(fresh []int) []Pattern {
	p := &planter{b: b}
	for _, a := range fresh {
		p.fresh = append(p.fresh, uint32(a))
	}
	order := b.r.Perm(len(b.house))
	for _, i := range order[:plantedHome] {
		p.homes = append(p.homes, b.house[i])
	}
	var unemployed []uint32
	for _, i := range order[plantedHome:] {
		if b.employer[i] < 0 {
			unemployed = append(unemployed, b.house[i])
		}
	}
	undirected := func(rule string) []Finder { return []Finder{{delta.Undirected, 4, rule}} }

	// fan-out
	mule := p.take(1)[0]
	payees := p.households(1 + muleOut + fanOut)
	p.pay(hm(1, 0), payees[0], mule, false)
	for k, x := range payees[1 : 1+muleOut] {
		p.pay(hm(1, k+1), mule, x, false)
	}
	for k, x := range payees[1+muleOut:] {
		p.pay(hm(2, 15+k), mule, x, false)
	}
	p.done(Pattern{Name: "fan-out", Title: "a mule account that, an hour after opening, pays 30 households in half an hour",
		Nodes: p.names(append([]uint32{mule}, payees...)...), Expect: p.names(mule),
		FoundBy: append(undirected("fan-out"), Finder{delta.Directed, 3, "fan-out"})})

	// ring
	senders, receivers := p.take(ringSend), p.take(ringRecv)
	t := hm(2, 50)
	for _, s := range senders {
		for _, r := range receivers {
			p.pay(t, s, r, false)
			t += 2 * time.Minute
		}
	}
	p.done(Pattern{Name: "ring", Title: "two accounts paying the same five accounts (ten 4-cycles through each sender)",
		Nodes: p.names(append(slices.Clone(senders), receivers...)...), Expect: p.names(senders...), FoundBy: undirected("ring")})

	// clique
	clique := p.take(cliqueSize)
	t = hm(3, 15)
	for i, x := range clique {
		for _, y := range clique[i+1:] {
			p.pay(t, x, y, false)
			t += 3 * time.Minute
		}
	}
	p.done(Pattern{Name: "clique", Title: "five accounts that all pay each other (K5: four K4s through each)",
		Nodes: p.names(clique...), Expect: p.names(clique...), FoundBy: undirected("clique")})

	p.cycle("cycle-3", 3, []time.Duration{hm(1, 30), hm(2, 30)}, 3)
	p.cycle("cycle-4", 4, []time.Duration{hm(1, 50)}, 4)
	p.passThrough()
	p.fanIn()
	p.disputeRing()
	p.chargebackStar()
	p.goBetween()

	p.done(Pattern{Name: "hub", Title: "the busiest shop: new customers all day, busy but normal",
		Nodes: p.names(b.hub), Quiet: true})
	staff := unemployed[:min(len(unemployed), len(b.house)/staffShare)]
	for k, h := range staff {
		p.pay(hm(2, 30)+time.Duration(k)*20*time.Second, b.payroll, h, false)
	}
	p.done(Pattern{Name: "payroll", Title: "the biggest payroll provider: pays most employed households, and from 2 h 30 min the staff of a new client; busy, growing, normal",
		Nodes: p.names(b.payroll), Quiet: true})
	return p.pats
}

// cycle plants a cycle of funds of n fresh accounts, each of which first
// pays cycleShops shops at 30 min: a round of payments A→B→…→A from each
// start in rounds, 5 min apart.
func (p *planter) cycle(name string, n int, rounds []time.Duration, minNodes int) {
	acc := p.take(n)
	for _, a := range acc {
		for _, s := range p.shopsOf(cycleShops) {
			p.pay(hm(0, 30), a, s, false)
		}
	}
	for _, start := range rounds {
		for k, a := range acc {
			p.pay(start+time.Duration(k)*5*time.Minute, a, acc[(k+1)%n], false)
		}
	}
	title := "three accounts that pass money round, A→B→C→A, twice"
	if n == 4 {
		title = "four accounts that pass money round, A→B→C→D→A"
	}
	p.done(Pattern{Name: name, Title: title, Nodes: p.names(acc...), Expect: p.names(acc...),
		FoundBy: []Finder{{delta.Directed, minNodes, "round-trip"}}})
}

func (p *planter) passThrough() {
	acc := p.take(1)[0]
	in, out := p.households(passIn), p.households(passOut)
	for k := range passIn {
		p.pay(hm(2, 5*k), in[k], acc, false)
		p.pay(hm(2, 5*k+2), acc, out[k], false)
	}
	for k := passIn; k < passOut; k++ {
		p.pay(hm(2, 31+2*(k-passIn)), acc, out[k], false)
	}
	p.done(Pattern{Name: "pass-through", Title: "an account paid by six households that pays each payment straight on, eight payees in half an hour",
		Nodes: p.names(append(append([]uint32{acc}, in...), out...)...), Expect: p.names(acc),
		FoundBy: []Finder{{delta.Directed, 3, "pass-through"}}})
}

func (p *planter) fanIn() {
	acc := p.take(2)
	payers := p.households(fanIn)
	for k, h := range payers {
		p.pay(hm(1, 10+k), h, acc[0], false)
	}
	p.pay(hm(1, 40), acc[0], acc[1], false)
	p.done(Pattern{Name: "fan-in", Title: "a collection account paid by 25 households in 25 minutes, which pays one account",
		Nodes: p.names(append(slices.Clone(acc), payers...)...), Expect: p.names(acc[0]),
		FoundBy: []Finder{{delta.Directed, 3, "fan-in"}}})
}

func (p *planter) disputeRing() {
	members := p.take(disputers)
	n := len(p.b.shopPerm)
	shops := p.b.shopPerm[n/2 : n/2+disputed]
	t := hm(0, 40)
	for i, x := range members {
		for _, y := range members[i+1:] {
			p.pay(t, x, y, false)
			t += 2 * time.Minute
		}
	}
	t = hm(1, 0)
	for _, x := range members {
		for _, s := range shops {
			p.pay(t, x, s, false)
			t += 2 * time.Minute
		}
	}
	t = hm(3, 0)
	for _, x := range members {
		for _, s := range shops {
			p.pay(t, s, x, true)
			t += 2 * time.Minute
		}
	}
	p.done(Pattern{Name: "dispute-ring", Title: "five accounts that pay each other, buy at the same three shops and charge every purchase back",
		Nodes: p.names(append(slices.Clone(members), shops...)...), Expect: p.names(members...),
		FoundBy: []Finder{{delta.Signed, 3, "dispute-ring"}}})
}

func (p *planter) chargebackStar() {
	m := p.take(1)[0]
	customers := p.households(starPaid)
	for k, h := range customers {
		p.pay(hm(0, 20+2*k), h, m, false)
	}
	for k, h := range customers[:starBack] {
		p.pay(hm(2, 40+3*k), m, h, true)
	}
	p.done(Pattern{Name: "chargeback-star", Title: "an account selling online, paid by 20 households of which 14 charge back",
		Nodes: p.names(append([]uint32{m}, customers...)...), Expect: p.names(m),
		FoundBy: []Finder{{delta.Signed, 3, "chargeback-star"}}})
}

func (p *planter) goBetween() {
	x := p.take(1)[0]
	sellers, buyers := p.take(goSellers), p.households(goBuyers)
	for k, h := range buyers {
		p.pay(hm(1, 15+k), h, x, false)
	}
	for k, s := range sellers {
		p.pay(hm(1, 20+k), x, s, false)
	}
	t, u := hm(1, 30), hm(3, 20)
	for k, h := range buyers {
		for j := range goPerBuyer {
			s := sellers[(k+j)%goSellers]
			p.pay(t, h, s, false)
			p.pay(u, s, h, true)
			t, u = t+2*time.Minute, u+2*time.Minute
		}
	}
	p.done(Pattern{Name: "go-between", Title: "an account that four buyers pay and that pays four sellers; the buyers pay the sellers too, then report them for fraud",
		Nodes: p.names(append(append([]uint32{x}, sellers...), buyers...)...), Expect: p.names(x),
		FoundBy: []Finder{{delta.Signed, 3, "unbalanced-triangles"}}})
}
