package stream

import (
	"encoding/binary"
	"errors"
	"fmt"
	"strings"
	"time"
	"unicode/utf8"
)

// binaryVersion is the first byte of a binary bus message.
const binaryVersion = 0x01

// Flag bits of a binary bus message.
const (
	flagRemove = 1 << iota
	flagTS
	flagNeg
	knownFlags = flagRemove | flagTS | flagNeg
)

// EncodeJSON appends the JSON bus form of e to dst:
// {"id":…,"ts":…,"op":…,"sign":"-","src":…,"dst":…}, id omitted when
// empty, ts (RFC 3339 with nanoseconds, UTC) omitted when !e.HasTS, sign
// only when negative. JSON strings carry only UTF-8, so an id or node id
// that is not valid UTF-8 is an error. e.Op must be valid.
func EncodeJSON(dst []byte, e Event) ([]byte, error) {
	for _, f := range [...]struct{ name, s string }{{"id", e.ID}, {"src", e.Src}, {"dst", e.Dst}} {
		if !utf8.ValidString(f.s) {
			return dst, fmt.Errorf("stream: encode JSON: %s %q is not UTF-8", f.name, f.s)
		}
	}
	dst = append(dst, '{')
	if e.ID != "" {
		dst = append(dst, `"id":`...)
		dst = appendJSONString(dst, e.ID)
		dst = append(dst, ',')
	}
	if e.HasTS {
		dst = append(dst, `"ts":"`...)
		dst = e.TS.UTC().AppendFormat(dst, time.RFC3339Nano)
		dst = append(dst, `",`...)
	}
	dst = append(dst, `"op":"`...)
	dst = append(dst, e.Op.String()...)
	if e.Neg {
		dst = append(dst, `","sign":"-`...)
	}
	dst = append(dst, `","src":`...)
	dst = appendJSONString(dst, e.Src)
	dst = append(dst, `,"dst":`...)
	dst = appendJSONString(dst, e.Dst)
	return append(dst, '}'), nil
}

// appendJSONString appends s, valid UTF-8, as a JSON string: '"', '\' and
// control characters escaped, everything else as is.
func appendJSONString(dst []byte, s string) []byte {
	const hexDigits = "0123456789abcdef"
	dst = append(dst, '"')
	for i := 0; i < len(s); i++ {
		switch c := s[i]; {
		case c == '"' || c == '\\':
			dst = append(dst, '\\', c)
		case c < 0x20:
			dst = append(dst, '\\', 'u', '0', '0', hexDigits[c>>4], hexDigits[c&0xf])
		default:
			dst = append(dst, c)
		}
	}
	return append(dst, '"')
}

// EncodeBinary appends the binary bus form of e to dst (layout in doc.go).
// e.Op must be valid.
func EncodeBinary(dst []byte, e Event) []byte {
	if !e.Op.Valid() {
		panic(fmt.Sprintf("stream: encode binary: invalid Op %d", uint8(e.Op)))
	}
	var flags byte
	if e.Op == OpRemove {
		flags |= flagRemove
	}
	if e.HasTS {
		flags |= flagTS
	}
	if e.Neg {
		flags |= flagNeg
	}
	dst = append(dst, binaryVersion, flags)
	if e.HasTS {
		dst = binary.AppendVarint(dst, e.TS.Unix())
		dst = binary.AppendUvarint(dst, uint64(e.TS.Nanosecond()))
	}
	for _, s := range [...]string{e.ID, e.Src, e.Dst} {
		dst = binary.AppendUvarint(dst, uint64(len(s)))
		dst = append(dst, s...)
	}
	return dst
}

// DecodeMessage decodes a bus message in either form: JSON when the first
// byte is '{' or JSON white space, binary when it is the version byte 1.
// Line is left 0 (the consumer sets it); ID is empty when the JSON form
// has none. A message whose event CheckEvent refuses (a node id too long,
// not UTF-8, with a NUL byte; an id with control characters) is an
// error too. The error says what is wrong with the message.
func DecodeMessage(data []byte) (Event, error) {
	if len(data) == 0 {
		return Event{}, errors.New("empty message")
	}
	var ev Event
	switch data[0] {
	case binaryVersion:
		var err error
		if ev, err = decodeBinary(data); err != nil {
			return Event{}, err
		}
		if err := CheckEvent(ev); err != nil {
			return Event{}, fmt.Errorf("binary message: %s", strings.TrimPrefix(err.Error(), "stream: "))
		}
	case '{', ' ', '\t', '\r', '\n':
		d := jsonlDecoder{keys: &busKeys}
		var c [numKeys]cell
		var f filler
		reason := d.cells(data, &c)
		if reason == "" {
			reason, _ = f.fill(&ev, &c)
		}
		if reason != "" {
			return Event{}, errors.New(reason)
		}
	default:
		return Event{}, fmt.Errorf("unknown message form (first byte 0x%02x)", data[0])
	}
	return ev, nil
}

// busKeys are the JSON bus form's member names: ours, without amount,
// which the bus does not carry.
var busKeys = [numKeys]string{"ts", "op", "src", "dst", "id", "sign", "\x00amount"}

func decodeBinary(data []byte) (Event, error) {
	var ev Event
	if len(data) < 2 {
		return ev, errors.New("binary message: truncated")
	}
	flags, p := data[1], data[2:]
	if flags&^knownFlags != 0 {
		return ev, fmt.Errorf("binary message: unknown flags 0x%02x", flags)
	}
	if flags&flagRemove != 0 {
		ev.Op = OpRemove
	}
	ev.Neg = flags&flagNeg != 0
	if flags&flagTS != 0 {
		sec, n := binary.Varint(p)
		if n <= 0 {
			return Event{}, errors.New("binary message: bad ts seconds")
		}
		p = p[n:]
		nsec, n := binary.Uvarint(p)
		if n <= 0 || nsec >= uint64(time.Second) {
			return Event{}, errors.New("binary message: bad ts nanoseconds")
		}
		p = p[n:]
		ev.TS, ev.HasTS = time.Unix(sec, int64(nsec)).UTC(), true
	}
	var fields [3]string
	for i, name := range [...]string{"id", "src", "dst"} {
		l, n := binary.Uvarint(p)
		if n <= 0 || l > uint64(len(p)-n) {
			return Event{}, fmt.Errorf("binary message: bad %s length", name)
		}
		fields[i] = string(p[n : n+int(l)])
		p = p[n+int(l):]
	}
	ev.ID, ev.Src, ev.Dst = fields[0], fields[1], fields[2]
	switch {
	case ev.Src == "":
		return Event{}, errors.New("binary message: empty src")
	case ev.Dst == "":
		return Event{}, errors.New("binary message: empty dst")
	case len(p) != 0:
		return Event{}, fmt.Errorf("binary message: %d bytes after the event", len(p))
	}
	return ev, nil
}
