// Package shard runs orbitwatch's counting: the applier, the live worker
// around it, and what the worker serves.
//
// The Applier is the one ordered pass over the event log that turns edge
// events into exact orbit vectors: for each event it applies the window's
// expiry removes, updates the multigraph, asks the counting engine for the
// orbit changes of a simple-graph change, and records which nodes and
// edges changed so that checkpoints write only those. Backfill, replay and
// the worker all drive the same Applier.
//
// The Worker reads the JetStream event log in order, keeps the whole
// adjacency, computes the orbit changes of the events its shard is
// responsible for (by a hash of the edge), ships them summed per batch to
// the shards that own the nodes (by a hash of the node id) over a
// de-duplicating shuffle stream, and commits a checkpoint at every cut.
// At each cut it evaluates the alert rules (package shard/alert) on the
// nodes it owns. Package shard/api serves what a worker shows (View) over
// HTTP: node reads, status, health, alerts, metrics and the web page.
//
// It owns the order of things, not the maths (package delta), the bytes on
// disk (package storage) or the decoding of input (package stream).
package shard
