package gen

import (
	"fmt"
	"math/rand/v2"
	"time"
)

// DirectedConfig describes the directed payments stream: consumers paying
// merchants, employers paying their employees, merchants refunding earlier
// purchases (the reverse arc), consumers in small groups paying each other,
// and repeated purchases over the same arc (multiplicity > 1). Every event
// is an Add; timestamps rise evenly through [Start, Start+Period).
type DirectedConfig struct {
	Consumers, Merchants, Employers int
	Events                          int
	Start                           time.Time
	Period                          time.Duration
	// ZipfS (> 1) and ZipfV (≥ 1) skew merchant popularity: rank k is
	// chosen with probability ∝ (ZipfV+k)^−ZipfS; a larger ZipfV caps the
	// biggest merchants. Employers use ZipfS with offset 1.
	ZipfS, ZipfV float64
	// EmployedShare is the fraction of consumers with an employer.
	EmployedShare float64
	// Shares of the events by kind; purchases take the rest.
	PayrollShare, RefundShare, TransferShare float64
	// RepeatShare is the fraction of purchases that repeat the arc of a
	// recent purchase (drawn from the last 65536) instead of a fresh draw.
	RepeatShare float64
	// GroupSize: consumers are cut into groups of this size (consecutive
	// ids); transfers go to another member of the payer's group.
	GroupSize int
}

// DefaultDirected returns the scenario used by the benchmarks for a given
// number of events: one consumer per 6 events, one merchant per 40
// consumers, 12 employers, Zipf exponent 1.2 with offset 20 (the top
// merchant gets about 1.5 % of fresh purchases), 70 % employed, shares payroll
// 10 %, refund 3 %, transfer 7 % (purchases 80 %, of which 15 % repeats),
// groups of 4, over 30 days from 2026-01-01T00:00:00Z.
func DefaultDirected(events int) DirectedConfig {
	consumers := max(8, events/6)
	return DirectedConfig{
		Consumers:     consumers,
		Merchants:     max(1, consumers/40),
		Employers:     12,
		Events:        events,
		Start:         time.Date(2026, 1, 1, 0, 0, 0, 0, time.UTC),
		Period:        30 * 24 * time.Hour,
		ZipfS:         1.2,
		ZipfV:         20,
		EmployedShare: 0.7,
		PayrollShare:  0.10,
		RefundShare:   0.03,
		TransferShare: 0.07,
		RepeatShare:   0.15,
		GroupSize:     4,
	}
}

func (c DirectedConfig) check() {
	shares := c.PayrollShare + c.RefundShare + c.TransferShare
	if c.Consumers < 2 || c.Merchants < 1 || c.Employers < 1 || c.Events < 0 || c.ZipfS <= 1 || c.ZipfV < 1 ||
		c.Period < time.Second || c.EmployedShare <= 0 || c.EmployedShare > 1 ||
		c.PayrollShare < 0 || c.RefundShare < 0 || c.TransferShare < 0 || shares > 1 ||
		c.RepeatShare < 0 || c.RepeatShare > 1 || c.GroupSize < 2 {
		panic(fmt.Sprintf("gen: invalid directed config %+v", c))
	}
}

const recentPurchases = 1 << 16

// DirectedPayments returns the population (accounts are consumers, shops
// merchants, payroll the employers) and the event stream. Event i has
// Unix = Start + ⌊i·Period/Events⌋ (whole seconds), so times never go
// back. A refund or transfer drawn before there is anything to refund, or
// a payroll of an employer with no employee, becomes a purchase. Panics on
// an invalid config.
func DirectedPayments(c DirectedConfig, seed uint64) (Population, []Event) {
	c.check()
	pop := Population{Accounts: c.Consumers, Shops: c.Merchants, Payrolls: c.Employers}
	r := newRand(seed)
	shopRank := rand.NewZipf(r, c.ZipfS, c.ZipfV, uint64(c.Merchants-1))
	empRank := rand.NewZipf(r, c.ZipfS, 1, uint64(c.Employers-1))
	employer := make([]uint32, 0, c.Consumers)
	employee := make([]uint32, 0, c.Consumers)
	for x := 0; x < c.Consumers; x++ {
		if r.Float64() < c.EmployedShare {
			employee = append(employee, uint32(x))
			employer = append(employer, pop.PayrollID(int(empRank.Uint64())))
		}
	}
	recent := make([]Edge, 0, recentPurchases)
	start := c.Start.Unix()
	period := int64(c.Period / time.Second)
	ev := make([]Event, c.Events)
	for i := range ev {
		var e Edge
		switch p := r.Float64(); {
		case p < c.PayrollShare && len(employee) > 0:
			j := r.IntN(len(employee))
			e = Edge{employer[j], employee[j]}
		case p >= c.PayrollShare && p < c.PayrollShare+c.RefundShare && len(recent) > 0:
			b := recent[r.IntN(len(recent))]
			e = Edge{b.V, b.U}
		case p >= c.PayrollShare+c.RefundShare && p < c.PayrollShare+c.RefundShare+c.TransferShare:
			e = transfer(r, c)
		default:
			if len(recent) > 0 && r.Float64() < c.RepeatShare {
				e = recent[r.IntN(len(recent))]
			} else {
				e = Edge{uint32(r.IntN(c.Consumers)), pop.ShopID(int(shopRank.Uint64()))}
			}
			if len(recent) < recentPurchases {
				recent = append(recent, e)
			} else {
				recent[i%recentPurchases] = e
			}
		}
		ev[i] = Event{Unix: start + int64(i)*period/int64(max(1, c.Events)), Op: Add, U: e.U, V: e.V}
	}
	return pop, ev
}

// transfer draws a payment between two members of one consumer group.
func transfer(r *rand.Rand, c DirectedConfig) Edge {
	for {
		a := r.IntN(c.Consumers)
		g := a / c.GroupSize * c.GroupSize
		size := min(c.GroupSize, c.Consumers-g)
		if size < 2 {
			continue
		}
		b := g + r.IntN(size-1)
		if b >= a {
			b++
		}
		return Edge{uint32(a), uint32(b)}
	}
}
