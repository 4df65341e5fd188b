// Package storage keeps orbitwatch's durable node state in a Badger
// directory: the node dictionary (string id ↔ dense uint32), the adjacency
// with multiplicities, every node's orbit vector with its history, the
// applied sequence and event-time watermark, opaque records the applier
// needs to resume (input progress, pending window expiries), the alerts
// raised at each cut, and investigators' verdicts on them (not versioned
// by cut: they are what people said, not a function of the log).
//
// Badger runs in managed mode: a checkpoint at sequence s writes every
// record at Badger version s, and a checkpoint is complete once its small
// meta record, committed last at the same version, exists. Readers and
// recovery read at the last complete version, so a checkpoint torn by a
// crash is invisible; Open repairs its leftovers before any new write.
// Because every version stays readable until retention moves Badger's
// discard timestamp, "as of" reads (by seq or by event-time watermark) and
// per-node history come straight from Badger's versions.
//
// Badger writes through memory-mapped files, so a full file system would
// crash the process instead of failing a write: every write first checks
// that the file system has room for it and for the work Badger does after
// it, and is refused with a *SpaceError, nothing written, when it has not
// (space.go). OpenReadOnly never writes to the directory: while a writer
// holds it, or after one was killed, it reads a private copy of the store
// (view.go).
//
// It is not for computing orbit counts (package delta), deciding when to
// checkpoint or what changed (package shard), or decoding events (package
// stream). It does not partition: one Store holds one worker's state.
package storage
