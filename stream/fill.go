package stream

import "fmt"

// filler turns the cells of one record into an event, with the rules
// every form shares.
type filler struct {
	// min is the amount filter's minimum, nil without a filter; minText
	// is as the user wrote it, for messages.
	min     *decimal
	minText string
	// nodes is scratch for the joined node ids.
	nodes []byte
}

// fill sets ev's fields from c. It returns the reason the record is
// rejected, or, for a good event the amount filter drops, why; both ""
// for an event to use. ev.Line and ev.FileLine are left as they are.
func (f *filler) fill(ev *Event, c *[numKeys]cell) (reject, filtered string) {
	for _, k := range [...]int{keySrc, keyDst} {
		if c[k].kind == kindOther {
			return fmt.Sprintf("%s is not a string or number: %s", keyNames[k], c[k].text), ""
		}
		if r := nodeIDReason(keyNames[k], c[k].text); r != "" {
			return r, ""
		}
	}
	// One string for both ids: one allocation per event, not two.
	src, dst := c[keySrc].text, c[keyDst].text
	f.nodes = append(append(f.nodes[:0], src...), dst...)
	both := string(f.nodes)
	ev.Src, ev.Dst = both[:len(src)], both[len(src):]
	if v := c[keyID]; v.kind != kindNull {
		if v.kind == kindOther {
			return fmt.Sprintf("id is not a string or number: %s", v.text), ""
		}
		if r := eventIDReason(v.text); r != "" {
			return r, ""
		}
		ev.ID = string(v.text)
	}
	if v := c[keyOp]; v.kind != kindNull {
		if v.kind != kindString {
			return fmt.Sprintf("op is not a string: %s", v.text), ""
		}
		op, ok := parseOp(v.text)
		if !ok {
			return fmt.Sprintf("bad op %q: want add or remove", v.text), ""
		}
		ev.Op = op
	}
	if v := c[keySign]; v.kind != kindNull {
		neg, ok := parseSign(v.text)
		if v.kind != kindString || !ok {
			return fmt.Sprintf("bad sign %q: want + or -", v.text), ""
		}
		ev.Neg = neg
	}
	if v := c[keyTS]; v.kind != kindNull {
		if v.kind == kindOther {
			return fmt.Sprintf("ts is not a string or number: %s", v.text), ""
		}
		t, err := parseTime(v.text)
		if err != nil {
			return fmt.Sprintf("bad ts %q", v.text), ""
		}
		ev.TS, ev.HasTS = t, true
	}
	if f.min == nil {
		return "", ""
	}
	v := c[keyAmount]
	switch v.kind {
	case kindNull:
		return "no amount", ""
	case kindOther:
		return fmt.Sprintf("amount is not a string or number: %s", v.text), ""
	}
	a, ok := parseDecimal(v.text)
	if !ok {
		return fmt.Sprintf("bad amount %q: want a decimal number such as 12 or -3.50", v.text), ""
	}
	if a.cmp(*f.min) < 0 {
		return "", fmt.Sprintf("amount below the minimum: %s < %s", v.text, f.minText)
	}
	return "", ""
}
