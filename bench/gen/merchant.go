package gen

// WithMerchant returns edges plus the customers of one new merchant, node
// n (the first id not used by edges, which must be n): share·len(edges)
// payments from payers drawn uniformly from 0..n−1, a payer who pays twice
// counted once. On a Barabási–Albert graph with m = 5, share 0.2 makes
// about n payments, which reach about 1 − 1/e ≈ 63 % of the n nodes as
// distinct customers. The merchant's edges are appended in payment order.
func WithMerchant(edges []Edge, n int, share float64, seed uint64) []Edge {
	r := newRand(seed)
	pays := int(share * float64(len(edges)))
	seen := make([]bool, n)
	out := append(make([]Edge, 0, len(edges)+pays), edges...)
	for range pays {
		p := uint32(r.IntN(n))
		if !seen[p] {
			seen[p] = true
			out = append(out, Edge{U: p, V: uint32(n)})
		}
	}
	return out
}
