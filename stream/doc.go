// Package stream turns edge logs into edge events and carries them over a
// NATS JetStream stream: the event model, the file and standard-input
// sources (CSV and JSON lines, optionally gzip), the bus codecs (JSON and a
// compact binary form), the embedded NATS server, and publishing (in
// order, each event once) and consuming.
//
// It is not for counting, storing state or ordering work: it knows nothing
// of graphs, orbits or shards, and it does not reject self-loops or removes
// of absent edges (that needs the graph; see package delta). It rejects
// only what is wrong with an event on its own: a missing or bad node id, a
// bad op, sign, time or amount, a malformed line.
//
// # Sources
//
// A source is read line by line: a line ends in "\n" (a "\r" before it is
// dropped), a last line without one counts, and no line may be longer
// than MaxLineBytes (1 MiB): a longer one is rejected and read past
// without being held. Lines are numbered as an editor numbers them, from
// 1, the CSV header and blank lines included (Event.FileLine,
// LineError.FileLine); every line is the header, blank, or one record.
// Records are numbered from 1 in the order read (Event.Line), the header
// and blank lines not counted, a rejected or filtered record counted: the
// commands use the record number as the event's sequence number. A blank
// line (empty in CSV; only spaces, tabs and "\r" in JSON lines) is counted
// (Reader.Blank) and is neither an event nor a reject.
//
// CSV needs a header row; the columns are ts, op, src, dst and optionally
// id, sign and amount (renamed with Options.Columns); other columns are
// listed by Reader.Unused. One record is one line: a field may be quoted
// (RFC 4180: a quote inside it doubled) but a quoted field cannot hold a
// line break, so an unbalanced quote rejects its own line and the next
// line is read afresh; a stray quote in an unquoted field, text after a
// closing quote, and a record whose field count differs from the
// header's are rejected. JSON lines carry one object per line with the
// same keys; a key given twice in an object rejects the line.
//
// op is "add" or "remove" in any letter case; empty or absent is add. sign
// is "+" or "-"; empty or absent is "+" (Event.Neg false). ts is read by
// ParseTime: a date ("2026-03-01"), a date and time with "T" or a space
// and an optional zone ("2026-03-01 09:17:00", UTC without a zone; RFC
// 3339), or a Unix time in seconds, or in milliseconds when its integer
// part is ≥ 1e11; empty or absent means no event time. With
// Options.MinAmount, the amount (a decimal number, compared exactly) must
// be at least that; a lower one is filtered (FilteredError), a missing or
// unreadable one rejected.
//
// Node ids are kept byte for byte, but must be valid UTF-8 (two different
// byte strings must never look alike in JSON or on the page), hold no NUL
// byte and be at most MaxIDBytes (1024) bytes; an event id (the id column)
// obeys the same rules and holds no control characters either (it travels
// in a message header). A line that breaks them is rejected with the
// reason; the source, the bus decoder and the publishers all check.
//
// An event without an id (no id column or key, or an empty one) gets one
// derived from the content: the hex of the first 16 bytes of the SHA-256
// of the (decompressed) content from its first byte to the end of the
// event's line, line ending included, then ":" and the record number. The
// same file published twice, or gzipped, or read from standard input,
// gives the same ids; a log that has grown by appending keeps the ids of
// its earlier part. A read error (gzip cut short or corrupt) is final and
// names the last complete line.
//
// # Bus
//
// A bus message is an event in one of two forms, told apart by the first
// byte. JSON: {"id":…,"ts":…,"op":…,"sign":"-","src":…,"dst":…}, ts an
// RFC 3339 string with nanoseconds and omitted when there is none, sign
// only when negative. Binary, version 1, all integers varints
// (encoding/binary):
//
//	byte     0x01 (version)
//	byte     flags: bit 0 remove, bit 1 has ts, bit 2 negative sign;
//	         other bits zero (messages from before the sign have bit 2
//	         clear and read as positive)
//	varint   ts seconds since 1970 (zig-zag), only with flag bit 1
//	uvarint  ts nanoseconds 0..999999999, only with flag bit 1
//	uvarint  length of id, then its bytes
//	uvarint  length of src, then its bytes (not 0)
//	uvarint  length of dst, then its bytes (not 0)
//
// and nothing after. Publishers send the binary form unless told
// otherwise; DecodeMessage reads both and refuses ids the sources refuse.
//
// # JetStream
//
// The event log is one file-backed stream (EnsureStream). Every publish
// sets the message's Nats-Msg-Id to the event id, so within the duplicate
// window (DefaultDuplicateWindow, kept across server restarts) the server
// stores an id once. OrderedPublisher also makes the server check the
// stream's last sequence and message before storing each event, so a log
// is stored in its order or the publisher stops, naming the first event
// not acknowledged; LogPublisher adds the Manifest, a key-value bucket of
// how far each log is stored, so a log published again after any span of
// time, or after a stop, stores only what is missing. Publisher, the
// plain asynchronous one, keeps neither promise across a lost connection.
// Consumer reads the stream in order from a stream sequence with an
// ordered consumer; the stream sequence is the event's log position (seq)
// and its Line. A message that does not decode is returned as a
// *MessageError with its sequence and reading goes on. StartEmbedded runs
// a server in-process, for tests and single-machine use: open on loopback
// only, or admitting the holder of an nkey generated on first start.
package stream
