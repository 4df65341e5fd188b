// Package gen makes the synthetic graphs and edge-event streams that
// orbitwatch is benchmarked and demonstrated on: Barabási–Albert graphs, an
// undirected graph of a fictional payments scenario (households, shops, a
// payroll provider, small groups paying each other), a directed payments
// stream with timestamps, refunds and repeated payments, the "churn" and
// "grow" event shapes, and a writer of CSV event logs in the orbitwatch
// input format (header ts,op,src,dst).
//
// Every generator is seeded and deterministic: the same parameters and seed
// give the same output on every machine (math/rand/v2 PCG). All names and
// data are invented; none describe real people or firms.
//
// It is not for reading event logs (that is the stream package) nor for
// counting anything; it only makes input.
package gen
