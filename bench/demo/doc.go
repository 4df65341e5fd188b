// Package demo makes the demonstration scenario of orbitwatch: a fictional
// payments network of our own (households, shops, payroll providers,
// refunds as reverse payments, chargebacks as negative ones) with planted
// patterns whose alerts an investigator should see, each meant for the
// graph kind that shows it — undirected: a fan-out mule account, a
// payment ring that closes 4-cycles, a colluding clique that closes K4s;
// directed: cycles of funds of three and four accounts, a pass-through
// account, a collection account, the mule's fan-out distribution; signed:
// a group that pays each other and disputes outsiders, a merchant at the
// centre of a star of chargebacks, a go-between whose counterparties
// dispute each other — and a busy merchant hub and a big, growing payroll
// provider that are normal and must stay quiet under every kind. The
// scenario returns its planted patterns as ground truth (Pattern.FoundBy
// names the kind and rule meant to find each), for the demo command's
// hints and for the alert evaluation (package bench/demo/evaluate,
// bench/cmd/alerteval). It also holds the alert rules the demo runs with
// (AlertConfig) and why they differ from the defaults.
//
// Every name and number is invented; none describes a real person or firm.
// The generator is seeded and deterministic.
//
// It is not for benchmarking the counters (package bench/gen makes those
// streams) nor for counting, alerting or scoring alerts (package
// evaluate replays the scenario through the product and scores what it
// raises).
package demo
