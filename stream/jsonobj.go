package stream

import (
	"bytes"
	"encoding/json"
	"fmt"
)

// jsonlDecoder reads one JSON object per line. Member names for ts, op,
// src, dst, id, sign and amount are keys; members not named are ignored
// (and listed by Reader.Unused); a name that appears twice in an object
// rejects the line. src, dst and id may be strings or numbers (a number
// is kept as its literal text); op and sign must be strings; ts and
// amount strings or numbers (see ParseTime); null is the same as absent.
// Only the top-level object is checked for repeated names.
//
// A string without escapes keeps its bytes exactly, even if they are not
// UTF-8 (the node id checks then reject it); a string with escapes is
// decoded by encoding/json.
type jsonlDecoder struct {
	// r receives unused keys; nil on the bus.
	r     *Reader
	keys  *[numKeys]string
	names [][]byte
	// decoded holds member names and values that had escapes.
	decoded []byte
}

func (d *jsonlDecoder) keyNames() *[numKeys]string {
	if d.keys == nil {
		return &d.r.keys
	}
	return d.keys
}

func (d *jsonlDecoder) cells(b []byte, c *[numKeys]cell) string {
	if !json.Valid(b) {
		var raw json.RawMessage
		err := json.Unmarshal(b, &raw)
		if err == nil {
			panic("stream: json.Valid and json.Unmarshal disagree")
		}
		return "invalid JSON: " + err.Error()
	}
	i := skipSpace(b, 0)
	if b[i] != '{' {
		return "not a JSON object"
	}
	*c = [numKeys]cell{}
	d.names, d.decoded = d.names[:0], d.decoded[:0]
	keys := d.keyNames()
	i = skipSpace(b, i+1)
	for b[i] != '}' {
		end := stringEnd(b, i)
		name := d.unescape(b[i:end])
		for _, seen := range d.names {
			if bytes.Equal(seen, name) {
				return fmt.Sprintf("duplicate key: %q", name)
			}
		}
		d.names = append(d.names, name)
		i = skipSpace(b, end)
		i = skipSpace(b, i+1) // past ':'
		vend := valueEnd(b, i)
		if k := matchKey(name, keys); k >= 0 && (k != keyAmount || d.r == nil || d.r.filler.min != nil) {
			c[k] = d.value(b[i:vend])
		} else if d.r != nil {
			d.r.noteUnused(name)
		}
		i = skipSpace(b, vend)
		if b[i] == ',' {
			i = skipSpace(b, i+1)
		}
	}
	return ""
}

// value returns the cell of a JSON value: a string's content (decoded when
// it has escapes), a number's literal, nothing for null.
func (d *jsonlDecoder) value(v []byte) cell {
	switch c := v[0]; {
	case string(v) == "null":
		return cell{}
	case c == '"':
		return cell{text: d.unescape(v), kind: kindString}
	case c == '-' || (c >= '0' && c <= '9'):
		return cell{text: v, kind: kindNumber}
	}
	return cell{text: v, kind: kindOther}
}

// unescape returns the content of the valid JSON string q (with its
// quotes): a slice of q without escapes, else the decoded text.
func (d *jsonlDecoder) unescape(q []byte) []byte {
	inner := q[1 : len(q)-1]
	if bytes.IndexByte(inner, '\\') < 0 {
		return inner
	}
	var s string
	if err := json.Unmarshal(q, &s); err != nil {
		panic("stream: valid JSON string failed to decode: " + err.Error())
	}
	// A fresh slice when d.decoded must grow, so that earlier names and
	// values stay as they were.
	if cap(d.decoded)-len(d.decoded) < len(s) {
		d.decoded = make([]byte, 0, max(2*cap(d.decoded), len(s)))
	}
	off := len(d.decoded)
	d.decoded = append(d.decoded, s...)
	return d.decoded[off:]
}

// matchKey returns the index of the key named name, or -1.
func matchKey(name []byte, keys *[numKeys]string) int {
	for k := range keys {
		if string(name) == keys[k] {
			return k
		}
	}
	return -1
}

// The scanners below assume b is valid JSON (json.Valid).

func skipSpace(b []byte, i int) int {
	for i < len(b) && (b[i] == ' ' || b[i] == '\t' || b[i] == '\r' || b[i] == '\n') {
		i++
	}
	return i
}

// stringEnd returns the index just past the string starting at b[i] == '"'.
func stringEnd(b []byte, i int) int {
	for j := i + 1; ; j++ {
		switch b[j] {
		case '\\':
			j++
		case '"':
			return j + 1
		}
	}
}

// valueEnd returns the index just past the value starting at b[i].
func valueEnd(b []byte, i int) int {
	switch b[i] {
	case '"':
		return stringEnd(b, i)
	case '{', '[':
		depth := 0
		for j := i; ; j++ {
			switch b[j] {
			case '"':
				j = stringEnd(b, j) - 1
			case '{', '[':
				depth++
			case '}', ']':
				depth--
				if depth == 0 {
					return j + 1
				}
			}
		}
	}
	j := i
	for j < len(b) && !isDelim(b[j]) {
		j++
	}
	return j
}

// isDelim reports whether c ends a number or literal.
func isDelim(c byte) bool {
	switch c {
	case ',', '}', ']', ' ', '\t', '\r', '\n':
		return true
	}
	return false
}
