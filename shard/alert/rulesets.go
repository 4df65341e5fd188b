package alert

import (
	"orbitwatch/delta"
	"orbitwatch/delta/catalog"
)

// weights1 returns the orbits of names, each of weight 1.
func weights1(cat *catalog.Catalog, names ...string) []OrbitWeight {
	out := make([]OrbitWeight, len(names))
	for i, n := range names {
		out[i] = OrbitWeight{mustOrbit(cat, n), 1}
	}
	return out
}

// DirectedRules returns the built-in orbit rules of a directed catalog
// (kind Directed, 3 or 4 nodes), orbits chosen by their short names. They
// read a node's flows in its one-way counterparties: its payers (they pay
// it, it does not pay them), its payees (the other way round); a
// counterparty it both pays and is paid by (a shop and the customer it
// refunded) is neither. With in and out the numbers of payers and payees,
// every pair of counterparties lies in one 3-node graphlet with the node,
// so
//
//	pairs of payees           C(out, 2) = "pays A and B" + "pays A and B; A pays B" + "pays A and B; A two-way with B"
//	pairs of payers           C(in, 2)  = "paid by A and B" + "paid by A and B; A pays B" + "paid by A and B; A two-way with B"
//	(payer, payee) pairs      in·out    = "pays A, paid by B" + "pays A, paid by B; B pays A" + "pays A, paid by B; A pays B" + "pays A, paid by B; A two-way with B"
//
// (the test TestDirectedRuleCounts holds these against the adjacency).
// The rules:
//
//   - fan-out (distribution): the pairs of payees grow ×8 against the
//     look-back to at least 200 (about 21 payees); a payroll provider
//     paying a thousand people grows by a small factor when it takes on
//     a new client, a mule that starts paying out grows from nothing.
//   - fan-in (collection): the same on the pairs of payers.
//   - pass-through: the (payer, payee) pairs, money in and straight out,
//     grow ×4 to at least 24 (six payers and four payees): a shop's
//     payments out are refunds to its own customers, a household has one
//     or two payers (its employer, its partner), so neither gets there.
//   - round-trip: the node is on a directed 3-cycle whose ties all go
//     one way ("pays A, paid by B; A pays B", A→B→node→A), and on the
//     4-node kind also on a directed 4-cycle ("any node of a directed
//     4-cycle"): money that went round and came back. A refund or a
//     chargeback on one of its ties makes the cycle another graphlet and
//     leaves the rule quiet, on purpose: a customer who pays a partner
//     who pays a shop that refunds the customer closes such a cycle
//     every day.
//
// The levels are rules of thumb checked on the demo scenario (package
// bench/demo; seeds 1 and 2, one simulated day, every touched background
// node at every evaluated cut), not fitted to real data: there the
// payroll provider's pairs of payees grew at most ×1.26 while it took on
// 150 staff in an hour, a shop's pairs of payers at most ×1.11, a
// household's (payer, payee) pairs reached at most 14, and no background
// node was on a one-way cycle.
func DirectedRules(cat *catalog.Catalog) []Rule {
	if cat.Kind != delta.Directed {
		panic("alert: DirectedRules of a " + cat.Kind.String() + " catalog")
	}
	pair := func(name, orbit string, with ...string) Rule {
		return Rule{Name: name, Kind: OrbitGrowth, Orbit: mustOrbit(cat, orbit), With: weights1(cat, with...), Fire: 8, Rearm: 3, MinCount: 200}
	}
	trip := Rule{Name: "round-trip", Kind: OrbitCount, Orbit: mustOrbit(cat, "pays A, paid by B; A pays B"), Fire: 1, Rearm: 0.5}
	if cat.MaxNodes >= 4 {
		trip.With = weights1(cat, "any node of a directed 4-cycle")
	}
	return []Rule{
		pair("fan-out", "pays A and B", "pays A and B; A pays B", "pays A and B; A two-way with B"),
		pair("fan-in", "paid by A and B", "paid by A and B; A pays B", "paid by A and B; A two-way with B"),
		{Name: "pass-through", Kind: OrbitGrowth, Orbit: mustOrbit(cat, "pays A, paid by B"),
			With: weights1(cat, "pays A, paid by B; B pays A", "pays A, paid by B; A pays B", "pays A, paid by B; A two-way with B"),
			Fire: 4, Rearm: 2, MinCount: 24},
		trip,
	}
}

// SignedRules returns the built-in orbit rules of a signed catalog (kind
// Signed, 3 or 4 nodes), orbits chosen by name. A tie is negative when a
// dispute (a chargeback, a payment returned on a fraud report) is open on
// it; a triangle is balanced when it has an even number of negative ties
// (Heider 1946; Cartwright & Harary 1956). The rules:
//
//   - chargeback-star: the share of the node's ties that are disputed,
//     "end of a negative tie" / ("end of a negative tie" + "end of a
//     positive tie"), reaches 0.4 with at least 8 disputed ties: a
//     merchant at the centre of a star of chargebacks. A busy shop's
//     share is its customers' dispute rate, a household has too few
//     ties.
//   - dispute-ring: the node is in at least 6 triangles of one positive
//     and two negative ties, on the positive one ("node between a
//     positive and a negative tie of a triangle with 2 negative ties
//     (balanced)"): it pays, or is paid by, accounts that dispute the
//     same outsiders it disputes: a group that pays each other and
//     disputes outsiders. Three members of such a group that dispute the
//     same two shops each have 4.
//   - unbalanced-triangles: the share of the node's triangles that are
//     unbalanced (one or three negative ties) reaches 0.5 with at least 6
//     of them: an account whose counterparties dispute each other, such
//     as a go-between whose buyers and sellers fall out.
//
// The levels are rules of thumb checked on the demo scenario (package
// bench/demo; seeds 1 and 2, one simulated day, every touched background
// node at every evaluated cut, a chargeback for one payment in a
// hundred), not fitted to real data: there a shop had at most 11
// disputed ties, a share of at most 0.015; no household had 8; the most
// unbalanced triangles of a background node was 5 (a busy shop, among
// hundreds of balanced ones), and no background node was on the positive
// tie of a triangle with two disputes (that needs two partners disputing
// the same shop).
func SignedRules(cat *catalog.Catalog) []Rule {
	if cat.Kind != delta.Signed {
		panic("alert: SignedRules of a " + cat.Kind.String() + " catalog")
	}
	return []Rule{
		{Name: "chargeback-star", Kind: OrbitShare, Orbit: mustOrbit(cat, "end of a negative tie"),
			Against: weights1(cat, "end of a positive tie"), Fire: 0.4, Rearm: 0.25, MinCount: 8},
		{Name: "dispute-ring", Kind: OrbitCount, Orbit: mustOrbit(cat, "node between a positive and a negative tie of a triangle with 2 negative ties (balanced)"),
			Fire: 6, Rearm: 3},
		{Name: "unbalanced-triangles", Kind: OrbitShare,
			Orbit: mustOrbit(cat, "node between two positive ties of a triangle with 1 negative tie (unbalanced)"),
			With: weights1(cat, "node between a positive and a negative tie of a triangle with 1 negative tie (unbalanced)",
				"any node of an all-negative triangle (unbalanced)"),
			Against: weights1(cat, "any node of an all-positive triangle (balanced)",
				"node between a positive and a negative tie of a triangle with 2 negative ties (balanced)",
				"node between two negative ties of a triangle with 2 negative ties (balanced)"),
			Fire: 0.5, Rearm: 0.3, MinCount: 6},
	}
}
