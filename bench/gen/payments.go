package gen

import (
	"fmt"
	"math/rand/v2"
)

// PaymentsConfig describes the undirected payments scenario: households
// paying shops, payroll providers paying households, small groups of
// households paying each other. The edge {a, b} means "a and b have paid
// each other at least once".
type PaymentsConfig struct {
	Households int
	Shops      int
	Payrolls   int
	// ShopsPerHousehold is the mean number of distinct shops a household
	// pays; each household pays a uniform 1..2·mean−1 of them.
	ShopsPerHousehold int
	// ZipfS (> 1) and ZipfV (≥ 1) skew shop popularity: the shop of rank
	// k is chosen with probability ∝ (ZipfV+k)^−ZipfS. A larger ZipfV caps
	// the biggest shops (ZipfV 1 gives the top shop about a fifth of all
	// custom). Payroll providers use ZipfS with offset 1.
	ZipfS, ZipfV float64
	// PayrollShare is the fraction of households paid by a payroll
	// provider (each by exactly one).
	PayrollShare float64
	// GroupSize is the size of the small groups households are cut into
	// (consecutive ids; the last group may be smaller).
	GroupSize int
	// GroupPairShare is the probability that two members of a group have
	// paid each other.
	GroupPairShare float64
}

// DefaultPayments returns the scenario used by the benchmarks for a given
// number of households: one shop per 40 households, 3 payroll providers,
// 4 shops per household, Zipf exponent 1.2 with offset 20, 60 % on
// payroll, groups of 5 with pair share 0.4.
func DefaultPayments(households int) PaymentsConfig {
	return PaymentsConfig{
		Households:        households,
		Shops:             max(1, households/40),
		Payrolls:          3,
		ShopsPerHousehold: 4,
		ZipfS:             1.2,
		ZipfV:             20,
		PayrollShare:      0.6,
		GroupSize:         5,
		GroupPairShare:    0.4,
	}
}

func (c PaymentsConfig) check() {
	if c.Households < 1 || c.Shops < 1 || c.Payrolls < 1 || c.ShopsPerHousehold < 1 ||
		c.ZipfS <= 1 || c.ZipfV < 1 || c.PayrollShare < 0 || c.PayrollShare > 1 || c.GroupSize < 1 ||
		c.GroupPairShare < 0 || c.GroupPairShare > 1 || c.ShopsPerHousehold > c.Shops {
		panic(fmt.Sprintf("gen: invalid payments config %+v", c))
	}
}

// Payments returns the population and the simple undirected edges of the
// scenario: household–shop, household–payroll and household–household
// edges, each pair once, no self-loops. Panics on an invalid config.
func Payments(c PaymentsConfig, seed uint64) (Population, []Edge) {
	c.check()
	pop := Population{Accounts: c.Households, Shops: c.Shops, Payrolls: c.Payrolls}
	r := newRand(seed)
	shopRank := rand.NewZipf(r, c.ZipfS, c.ZipfV, uint64(c.Shops-1))
	payRank := rand.NewZipf(r, c.ZipfS, 1, uint64(c.Payrolls-1))
	edges := make([]Edge, 0, c.Households*(c.ShopsPerHousehold+2))
	picked := make([]uint32, 0, 2*c.ShopsPerHousehold)
	for h := 0; h < c.Households; h++ {
		k := 1 + r.IntN(2*c.ShopsPerHousehold-1)
		picked = picked[:0]
		for len(picked) < k {
			s := pop.ShopID(int(shopRank.Uint64()))
			if !containsID(picked, s) {
				picked = append(picked, s)
			}
		}
		for _, s := range picked {
			edges = append(edges, Edge{uint32(h), s})
		}
		if r.Float64() < c.PayrollShare {
			edges = append(edges, Edge{pop.PayrollID(int(payRank.Uint64())), uint32(h)})
		}
	}
	for g := 0; g < c.Households; g += c.GroupSize {
		end := min(g+c.GroupSize, c.Households)
		for a := g; a < end; a++ {
			for b := a + 1; b < end; b++ {
				if r.Float64() < c.GroupPairShare {
					edges = append(edges, Edge{uint32(a), uint32(b)})
				}
			}
		}
	}
	return pop, edges
}
