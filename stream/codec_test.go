package stream

import (
	"bytes"
	"encoding/json"
	"strings"
	"testing"
	"time"
)

var codecEvents = []Event{
	{ID: "e1", Op: OpAdd, Src: "a", Dst: "b"},
	{ID: "f00d:12", Op: OpRemove, Src: "acct 7", Dst: "acct-8", TS: time.Date(2026, 3, 1, 9, 30, 0, 123456789, time.UTC), HasTS: true},
	{ID: "", Op: OpAdd, Src: "q\"uo\\te", Dst: "tab\tnew\nline\x01", TS: time.Unix(-86401, 5).UTC(), HasTS: true},
	{ID: "ü-ñ", Op: OpAdd, Src: "日本", Dst: "\u2028x", TS: time.Unix(0, 0).UTC(), HasTS: true},
	{ID: "d-1", Op: OpAdd, Neg: true, Src: "m", Dst: "n"},
}

func sameEvent(a, b Event) bool {
	return a.ID == b.ID && a.Op == b.Op && a.Neg == b.Neg && a.Src == b.Src && a.Dst == b.Dst &&
		a.HasTS == b.HasTS && (!a.HasTS || a.TS.Equal(b.TS)) && a.Line == b.Line
}

func TestCodecRoundTrip(t *testing.T) {
	for _, e := range codecEvents {
		j, err := EncodeJSON(nil, e)
		if err != nil {
			t.Fatal(err)
		}
		for form, data := range map[string][]byte{"json": j, "binary": EncodeBinary(nil, e)} {
			got, err := DecodeMessage(data)
			if err != nil || !sameEvent(got, e) {
				t.Errorf("%s %q: decoded %+v, %v; want %+v", form, data, got, err, e)
			}
		}
		// encoding/json is the outside judge of our JSON writer.
		var m map[string]string
		if err := json.Unmarshal(j, &m); err != nil {
			t.Fatalf("%s: not JSON: %v", j, err)
		}
		if m["src"] != e.Src || m["dst"] != e.Dst || m["id"] != e.ID || m["op"] != e.Op.String() {
			t.Errorf("%s read by encoding/json as %v", j, m)
		}
		if _, has := m["ts"]; has != e.HasTS {
			t.Errorf("%s: ts present %v, want %v", j, has, e.HasTS)
		}
	}
}

func TestCodecExactBytes(t *testing.T) {
	e := Event{ID: "e1", Op: OpRemove, Src: "a", Dst: "bc", TS: time.Unix(1, 5), HasTS: true}
	// Worked by hand from the layout in doc.go: version 1, flags remove|ts
	// = 3, zig-zag varint of 1 = 2, uvarint 5, then length-prefixed id,
	// src, dst.
	want := []byte{0x01, 0x03, 0x02, 0x05, 0x02, 'e', '1', 0x01, 'a', 0x02, 'b', 'c'}
	if got := EncodeBinary(nil, e); !bytes.Equal(got, want) {
		t.Errorf("binary % x, want % x", got, want)
	}
	wantJSON := `{"id":"e1","ts":"1970-01-01T00:00:01.000000005Z","op":"remove","src":"a","dst":"bc"}`
	if got, err := EncodeJSON(nil, e); err != nil || string(got) != wantJSON {
		t.Errorf("JSON %s, %v; want %s", got, err, wantJSON)
	}
	prefix := []byte("kept")
	if got := EncodeBinary(prefix, e); !bytes.Equal(got[:4], prefix) || !bytes.Equal(got[4:], want) {
		t.Error("EncodeBinary does not append to dst")
	}
}

// TestCodecRefusesBadIDs: ids the sources reject are refused on the bus
// too, in both forms, so that no message can carry what no log could.
func TestCodecRefusesBadIDs(t *testing.T) {
	e := Event{ID: "x", Src: "\xff\xfe", Dst: "b"}
	if _, err := EncodeJSON(nil, e); err == nil || !strings.Contains(err.Error(), "src") {
		t.Errorf("EncodeJSON of a non-UTF-8 src: %v, want an error naming src", err)
	}
	long := strings.Repeat("x", MaxIDBytes+1)
	for _, tc := range []struct {
		e      Event
		reason string
	}{
		{e, "binary message: src is not valid UTF-8: byte 0xff at byte 1"},
		{Event{ID: "x", Src: "a\x00b", Dst: "b"}, "binary message: src contains a NUL byte: at byte 2"},
		{Event{ID: "x", Src: "a", Dst: long}, "binary message: dst too long: 1025 bytes, the limit is 1024"},
		{Event{ID: "x\r\ny", Src: "a", Dst: "b"}, "binary message: id contains a control character: byte 0x0d at byte 2"},
		{Event{ID: long, Src: "a", Dst: "b"}, "binary message: id too long: 1025 bytes, the limit is 1024"},
	} {
		if _, err := DecodeMessage(EncodeBinary(nil, tc.e)); err == nil || err.Error() != tc.reason {
			t.Errorf("DecodeMessage(%.40q) = %v, want %q", tc.e.Src+"|"+tc.e.Dst+"|"+tc.e.ID, err, tc.reason)
		}
	}
	at := Event{ID: "x", Src: "a", Dst: strings.Repeat("y", MaxIDBytes)}
	if got, err := DecodeMessage(EncodeBinary(nil, at)); err != nil || got.Dst != at.Dst {
		t.Errorf("a node id of exactly %d bytes: %v", MaxIDBytes, err)
	}
	for _, msg := range []string{
		`{"src":"a","dst":"` + long + `"}`,
		`{"src":"a\u0000","dst":"b"}`,
		"{\"src\":\"a\xff\",\"dst\":\"b\"}",
		`{"src":"a","dst":"b","src":"c"}`,
	} {
		if _, err := DecodeMessage([]byte(msg)); err == nil {
			t.Errorf("JSON message %.60q decoded, want a reject", msg)
		}
	}
}

// TestCodecSign: a negative sign travels in both forms; messages written
// before there was a sign (flag bit 2 clear, no "sign" key) decode as
// positive.
func TestCodecSign(t *testing.T) {
	e := Event{ID: "d1", Op: OpRemove, Neg: true, Src: "a", Dst: "b"}
	// Worked by hand: flags remove|neg = 1|4 = 5, no ts.
	want := []byte{0x01, 0x05, 0x02, 'd', '1', 0x01, 'a', 0x01, 'b'}
	if got := EncodeBinary(nil, e); !bytes.Equal(got, want) {
		t.Errorf("binary % x, want % x", got, want)
	}
	wantJSON := `{"id":"d1","op":"remove","sign":"-","src":"a","dst":"b"}`
	if got, err := EncodeJSON(nil, e); err != nil || string(got) != wantJSON {
		t.Errorf("JSON %s, %v; want %s", got, err, wantJSON)
	}
	for _, data := range [][]byte{want, []byte(wantJSON)} {
		if got, err := DecodeMessage(data); err != nil || !got.Neg || got.Op != OpRemove {
			t.Errorf("%q decodes to %+v, %v", data, got, err)
		}
	}
	old := []byte{0x01, 0x01, 0x02, 'd', '1', 0x01, 'a', 0x01, 'b'}
	for _, data := range [][]byte{old, []byte(`{"id":"d1","op":"remove","src":"a","dst":"b"}`)} {
		if got, err := DecodeMessage(data); err != nil || got.Neg {
			t.Errorf("old message %q decodes to %+v, %v; want positive", data, got, err)
		}
	}
}

func TestDecodeMessageRejects(t *testing.T) {
	for _, tc := range []struct {
		data   []byte
		reason string
	}{
		{nil, "empty message"},
		{[]byte{0x02, 0}, "unknown message form (first byte 0x02)"},
		{[]byte("add,a,b"), "unknown message form (first byte 0x61)"},
		{[]byte{0x01}, "binary message: truncated"},
		{[]byte{0x01, 0x08, 0, 1, 'a', 1, 'b'}, "binary message: unknown flags 0x08"},
		{[]byte{0x01, 0x02}, "binary message: bad ts seconds"},
		{[]byte{0x01, 0x02, 0x00, 0x80, 0x94, 0xeb, 0xdc, 0x03, 0, 1, 'a', 1, 'b'}, "binary message: bad ts nanoseconds"}, // 1e9 as uvarint
		{[]byte{0x01, 0x00, 0x05, 'a'}, "binary message: bad id length"},
		{[]byte{0x01, 0x00, 0x00, 0x00, 0x01, 'b'}, "binary message: empty src"},
		{[]byte{0x01, 0x00, 0x00, 0x01, 'a'}, "binary message: bad dst length"},
		{[]byte{0x01, 0x00, 0x00, 0x01, 'a', 0x00}, "binary message: empty dst"},
		{[]byte{0x01, 0x00, 0x00, 0x01, 'a', 0x01, 'b', 'z'}, "binary message: 1 bytes after the event"},
		{[]byte(`{"src":"a"}`), "empty dst"},
		{[]byte(`{"src":"a","dst":"b","op":"flip"}`), `bad op "flip": want add or remove`},
		{[]byte(`{"src":"a",`), "invalid JSON: unexpected end of JSON input"},
	} {
		_, err := DecodeMessage(tc.data)
		if err == nil || err.Error() != tc.reason {
			t.Errorf("DecodeMessage(% x) = %v, want %q", tc.data, err, tc.reason)
		}
	}
}

func FuzzDecodeBinary(f *testing.F) {
	for _, e := range codecEvents {
		f.Add(EncodeBinary(nil, e))
	}
	f.Add([]byte{0x01, 0x02, 0xff, 0xff, 0xff, 0xff, 0xff, 0xff, 0xff, 0xff, 0xff, 0x01, 0x00, 0, 1, 'a', 1, 'b'})
	f.Fuzz(func(t *testing.T, data []byte) {
		ev, err := DecodeMessage(data)
		if err != nil {
			return
		}
		if ev.Src == "" || ev.Dst == "" || !ev.Op.Valid() {
			t.Fatalf("decoded a bad event %+v", ev)
		}
		again, err := DecodeMessage(EncodeBinary(nil, ev))
		if err != nil || !sameEvent(again, ev) {
			t.Fatalf("re-encoded %+v decodes as %+v, %v", ev, again, err)
		}
	})
}

func BenchmarkEncodeBinary(b *testing.B) {
	e := codecEvents[1]
	buf := make([]byte, 0, 128)
	b.ReportAllocs()
	for b.Loop() {
		buf = EncodeBinary(buf[:0], e)
	}
}

func BenchmarkDecodeBinary(b *testing.B) {
	data := EncodeBinary(nil, codecEvents[1])
	b.ReportAllocs()
	for b.Loop() {
		if _, err := DecodeMessage(data); err != nil {
			b.Fatal(err)
		}
	}
}
