// Package demo makes the demonstration scenario of orbitwatch: a fictional
// payments network of our own (households, shops, payroll providers,
// refunds as reverse payments) with planted patterns whose alerts an
// investigator should see — a fan-out mule account, a payment ring that
// closes 4-cycles, a colluding clique that closes K4s — and a busy merchant
// hub that is normal and must stay quiet. The scenario returns its planted
// patterns as ground truth, for the demo command's hints and for the
// alert evaluation (bench/cmd/alerteval). It also holds the alert rules the
// demo runs with (alerts.yaml) and why they differ from the defaults.
//
// Every name and number is invented; none describes a real person or firm.
// The generator is seeded and deterministic.
//
// It is not for benchmarking the counters (package bench/gen makes those
// streams) nor for counting or alerting itself; it only makes input and
// names what is hidden in it.
package demo
