// Package stream turns edge logs into edge events and carries them over a
// NATS JetStream stream: the event model, the file and standard-input
// sources (CSV and JSON lines, optionally gzip), the bus codecs (JSON and a
// compact binary form), the embedded NATS server, and publishing and
// consuming with de-duplication by event id.
//
// It is not for counting, storing state or ordering work: it knows nothing
// of graphs, orbits or shards, and it does not reject self-loops or removes
// of absent edges (that needs the graph; see package delta). It rejects
// only what is wrong with an event on its own: a missing node id, a bad op,
// a bad time, a malformed line.
//
// # Sources
//
// CSV needs a header row; the columns are ts, op, src, dst and optionally
// id (renamed with Options.Columns), extra columns are ignored. Quoting is
// RFC 4180 (encoding/csv, strict quotes, any number of fields per record).
// JSON lines carry one object per line with the same keys. op is "add" or
// "remove"; empty or absent is add. ts is RFC 3339 or a Unix time in
// seconds, or in milliseconds when its integer part is ≥ 1e11 (see
// ParseTime); empty or absent means no event time. Node ids are kept byte
// for byte.
//
// Line numbers are data line numbers, from 1: the CSV header is not
// counted; a CSV record whose quoted field spans several physical lines
// counts once; blank lines (skipped by CSV, skipped in JSON lines) are not
// counted. A bad line counts.
//
// An event without an id (no id column or key, or an empty one) gets one
// derived from the content: the hex of the
// first 16 bytes of the SHA-256 of the (decompressed) content from its
// first byte to the end of the event's record, then ":" and the line
// number. The same file published twice, or gzipped, or read from standard
// input, gives the same ids, so the bus drops the second copy; a log that
// has grown by appending keeps the ids of its earlier part.
//
// # Bus
//
// A bus message is an event in one of two forms, told apart by the first
// byte. JSON: {"id":…,"ts":…,"op":…,"src":…,"dst":…}, ts an RFC 3339
// string with nanoseconds and omitted when there is none. Binary, version
// 1, all integers varints (encoding/binary):
//
//	byte     0x01 (version)
//	byte     flags: bit 0 remove, bit 1 has ts; other bits zero
//	varint   ts seconds since 1970 (zig-zag), only with flag bit 1
//	uvarint  ts nanoseconds 0..999999999, only with flag bit 1
//	uvarint  length of id, then its bytes
//	uvarint  length of src, then its bytes (not 0)
//	uvarint  length of dst, then its bytes (not 0)
//
// and nothing after. JSON cannot carry node ids that are not UTF-8; the
// binary form carries any bytes. Publisher sends the binary form unless
// told otherwise; DecodeMessage reads both.
//
// # JetStream
//
// The event log is one file-backed stream (EnsureStream). Publisher sets
// each message's Nats-Msg-Id to the event id, so within the duplicate
// window (DefaultDuplicateWindow, kept across server restarts) the server
// stores an id once and acks a republish as a duplicate. Consumer reads
// the stream in order from a stream sequence with an ordered consumer;
// the stream sequence is the event's log position (seq) and its Line. A
// message that does not decode is returned as a *MessageError with its
// sequence and reading goes on. StartEmbedded runs a server in-process,
// for tests and single-machine use.
package stream
