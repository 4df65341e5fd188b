// Package alert decides, at each cut, which touched nodes changed their
// structural role enough to tell an investigator: a signature shift (the
// GDV distance of Milenković & Pržulj 2008 between a node's orbit vector and
// its baseline), or an orbit rule (the count of one orbit, or of a
// weighted sum of orbits, its growth against the baseline, or its share
// among weighted related orbits of the node's own vector, above a level:
// the share of the 4-cycle among the ways a node's 2-paths go on tells a
// ring from a customer of a busy shop, see RingAgainst). Rules come from a
// YAML file or from DefaultConfig, which has rules for each graph kind:
// rings and cliques on undirected graphs, flows of money on directed ones
// (DirectedRules: fan-out, fan-in, pass-through, round-trip) and disputes
// on signed ones (SignedRules); gates (minimum degree and total count), hysteresis, a
// per-node cool-down and a cap on alerts per minute of event time damp
// them. An Alert names the node, the cut, the rule, the score and the
// orbits that moved most, with their plain names from the catalog.
//
// Evaluate is pure given its inputs and the Evaluator's own state: no I/O,
// no clocks (times come with the Cut), so a replay of the log gives the same
// alerts with the same ids. The state (hysteresis, cool-downs, decayed
// baselines, the rate window) is serialisable so a worker can checkpoint it
// with its counts, and Forget drops that of nodes gone quiet. Outside
// Evaluate, Records turns alerts into storage records, and Webhook
// delivers alerts over HTTP from its own goroutine without ever blocking
// the caller.
//
// At a cut the worker's alert stage (shard.AlertStage) reads each changed
// node's baseline, calls Evaluate, and puts the alerts, the scored vectors
// and the Evaluator's state into the cut's checkpoint; once the cut is
// durable the worker publishes the alerts and hands them to Webhook.
//
// It is not for counting (package delta), for reading baselines from
// history (the caller reads them from package storage, which also stores the
// alert records), or for deciding what is fraud: an alert is a lead for a
// trained investigator, not a finding about a person.
package alert
