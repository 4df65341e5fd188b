package stream

import (
	"bytes"
	"encoding/json"
	"fmt"
)

// decodeObject fills ev from one JSON object whose member names for ts,
// op, src, dst and id are keys. It returns "" or the reason the object is
// rejected. Members not named are ignored; for a repeated member the last
// one counts. src, dst and id may be strings or numbers (a number is kept
// as its literal text); op must be a string; ts a string or a number (see
// ParseTime); null is the same as absent.
//
// A string without escapes keeps its bytes exactly, even if they are not
// UTF-8; a string with escapes is decoded by encoding/json.
func decodeObject(b []byte, keys *[numKeys]string, ev *Event) string {
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
	var vals [numKeys][]byte
	i = skipSpace(b, i+1)
	for b[i] != '}' {
		end := stringEnd(b, i)
		name := b[i+1 : end-1]
		i = skipSpace(b, end)
		i = skipSpace(b, i+1) // past ':'
		vend := valueEnd(b, i)
		if k := matchKey(name, keys); k >= 0 {
			vals[k] = b[i:vend]
		}
		i = skipSpace(b, vend)
		if b[i] == ',' {
			i = skipSpace(b, i+1)
		}
	}
	*ev = Event{}
	var reason string
	if ev.Src, reason = jsonNode(vals[keySrc], "src"); reason != "" {
		return reason
	}
	if ev.Dst, reason = jsonNode(vals[keyDst], "dst"); reason != "" {
		return reason
	}
	if ev.Src == "" {
		return "empty src"
	}
	if ev.Dst == "" {
		return "empty dst"
	}
	if v := vals[keyID]; v != nil {
		text, kind := jsonValue(v)
		if kind == kindOther {
			return fmt.Sprintf("id is not a string or number: %s", v)
		}
		ev.ID = string(text)
	}
	if v := vals[keyOp]; v != nil {
		text, kind := jsonValue(v)
		if kind == kindNumber || kind == kindOther {
			return fmt.Sprintf("op is not a string: %s", v)
		}
		op, ok := parseOp(text)
		if !ok {
			return fmt.Sprintf("bad op %q", text)
		}
		ev.Op = op
	}
	if v := vals[keyTS]; v != nil {
		text, kind := jsonValue(v)
		switch kind {
		case kindOther:
			return fmt.Sprintf("ts is not a string or number: %s", v)
		case kindString, kindNumber:
			t, err := parseTime(text)
			if err != nil {
				return fmt.Sprintf("bad ts %s", v)
			}
			ev.TS, ev.HasTS = t, true
		}
	}
	return ""
}

// jsonNode returns the node id in v, which must be a string, a number or
// null; the reason is "" when it is.
func jsonNode(v []byte, key string) (string, string) {
	text, kind := jsonValue(v)
	if kind == kindOther {
		return "", fmt.Sprintf("%s is not a string or number: %s", key, v)
	}
	return string(text), ""
}

// Kinds of a JSON value for jsonValue.
const (
	kindNull = iota // absent or null
	kindString
	kindNumber
	kindOther // true, false, object, array
)

// jsonValue returns the text of a value: a string's content (decoded when
// it has escapes), a number's literal, nothing for null or absent (nil v).
func jsonValue(v []byte) ([]byte, int) {
	if v == nil || string(v) == "null" {
		return nil, kindNull
	}
	switch c := v[0]; {
	case c == '"':
		inner := v[1 : len(v)-1]
		if bytes.IndexByte(inner, '\\') < 0 {
			return inner, kindString
		}
		var s string
		if err := json.Unmarshal(v, &s); err != nil {
			panic("stream: valid JSON string failed to decode: " + err.Error())
		}
		return []byte(s), kindString
	case c == '-' || (c >= '0' && c <= '9'):
		return v, kindNumber
	}
	return v, kindOther
}

// matchKey returns the index of the key whose name is the raw member name
// (as between its quotes), or -1.
func matchKey(raw []byte, keys *[numKeys]string) int {
	name := raw
	if bytes.IndexByte(raw, '\\') >= 0 {
		var s string
		quoted := append(append([]byte{'"'}, raw...), '"')
		if err := json.Unmarshal(quoted, &s); err != nil {
			panic("stream: valid JSON member name failed to decode: " + err.Error())
		}
		name = []byte(s)
	}
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
