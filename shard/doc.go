// Package shard runs the applier: the one ordered pass over the event log
// that turns edge events into exact orbit vectors. For each event it emits
// the window's expiry removes, updates the multigraph, asks the counting
// engine for the orbit changes of a simple-graph change, and records which
// nodes were touched so that checkpoints write only what changed.
//
// It owns the order of things, not the maths (package delta), the bytes on
// disk (package storage) or the decoding of input (package stream).
package shard
