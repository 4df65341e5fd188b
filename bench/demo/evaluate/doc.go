// Package evaluate measures alert rules on the demo scenario (package
// bench/demo), whose planted patterns are the ground truth: Run replays
// the scenario through the product's applier, alert stage, evaluator and
// a Badger store in event time; Score sorts what they raised into found
// patterns, quiet patterns and false alerts; FalseRate and FalseBound put
// the false alerts against a target rate. bench/cmd/alerteval prints the
// result; the package's tests hold every graph kind's demo rules to it.
//
// It is its own package, not part of bench/demo, because it drives
// package shard, whose tests use the scenario.
//
// It is not for choosing rules or levels (it scores the ones it is given)
// nor for timing (bench/cmd/livebench, backfillbench).
package evaluate
