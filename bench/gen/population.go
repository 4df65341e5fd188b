package gen

import (
	"fmt"
	"strconv"
)

// Role is the part a node plays in the fictional payments scenario.
type Role uint8

const (
	// Account is a household or consumer account: "acct-000123".
	Account Role = iota
	// Shop is a merchant: "shop-0042".
	Shop
	// Payroll is an employer or payroll provider: "payroll-01".
	Payroll
)

// String returns the role's name prefix.
func (r Role) String() string {
	switch r {
	case Account:
		return "acct"
	case Shop:
		return "shop"
	case Payroll:
		return "payroll"
	}
	return fmt.Sprintf("Role(%d)", uint8(r))
}

// Population lays out dense node ids by role: accounts 0..Accounts-1, then
// shops, then payroll providers. Names number each role from 0 within it.
type Population struct {
	Accounts, Shops, Payrolls int
}

// Nodes returns the number of node ids, Accounts+Shops+Payrolls.
func (p Population) Nodes() int { return p.Accounts + p.Shops + p.Payrolls }

// ShopID returns the node id of shop i; 0 ≤ i < Shops.
func (p Population) ShopID(i int) uint32 { return uint32(p.Accounts + i) }

// PayrollID returns the node id of payroll provider i; 0 ≤ i < Payrolls.
func (p Population) PayrollID(i int) uint32 { return uint32(p.Accounts + p.Shops + i) }

// Role returns the role of node id; id must be < Nodes().
func (p Population) Role(id uint32) Role {
	switch i := int(id); {
	case i < p.Accounts:
		return Account
	case i < p.Accounts+p.Shops:
		return Shop
	case i < p.Nodes():
		return Payroll
	}
	panic(fmt.Sprintf("gen: node id %d outside a population of %d", id, p.Nodes()))
}

// AppendName appends the node's name to dst: "acct-" and 6 digits, "shop-"
// and 4, "payroll-" and 2, zero-padded (wider when the number needs it).
// It allocates nothing when dst has room.
func (p Population) AppendName(dst []byte, id uint32) []byte {
	r := p.Role(id)
	i := int(id)
	width := 6
	switch r {
	case Shop:
		i -= p.Accounts
		width = 4
	case Payroll:
		i -= p.Accounts + p.Shops
		width = 2
	}
	dst = append(dst, r.String()...)
	dst = append(dst, '-')
	digits := 1
	for x := i; x >= 10; x /= 10 {
		digits++
	}
	for ; digits < width; digits++ {
		dst = append(dst, '0')
	}
	return strconv.AppendInt(dst, int64(i), 10)
}
