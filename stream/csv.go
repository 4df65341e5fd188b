package stream

import (
	"encoding/csv"
	"errors"
	"fmt"
	"io"
)

// csvDecoder reads RFC 4180 CSV with a header row. Lines count records:
// a quoted field spanning several physical lines is one line, blank
// physical lines are skipped and not counted.
type csvDecoder struct {
	r    *Reader
	cr   *csv.Reader
	col  [numKeys]int // field index of each key, -1 when absent
	need int          // fields a record must have: highest used index + 1
	line int
	// base is the content offset where the CSV text starts (after a BOM).
	base int64
	// pe receives parse errors; a field, so errors.As does not allocate.
	pe *csv.ParseError
}

func newCSVDecoder(r *Reader, keys [numKeys]string) (*csvDecoder, error) {
	d := &csvDecoder{r: r, base: r.hashed}
	d.cr = csv.NewReader(r.br)
	d.cr.FieldsPerRecord = -1
	d.cr.ReuseRecord = true
	header, err := d.cr.Read()
	if err == io.EOF {
		return nil, errors.New("csv: empty input: a header row is required")
	}
	if err != nil {
		return nil, fmt.Errorf("csv header: %w", err)
	}
	d.take()
	for k := range d.col {
		d.col[k] = -1
	}
	for i, h := range header {
		for k, name := range keys {
			if h != name {
				continue
			}
			if d.col[k] >= 0 {
				return nil, fmt.Errorf("csv header: column %q appears twice", h)
			}
			d.col[k] = i
			d.need = max(d.need, i+1)
		}
	}
	for _, k := range []int{keySrc, keyDst} {
		if d.col[k] < 0 {
			return nil, fmt.Errorf("csv header: no column %q (for %s)", keys[k], keyNames[k])
		}
	}
	return d, nil
}

// take hands the bytes of the record just read to the Reader and returns
// them without the line ending.
func (d *csvDecoder) take() []byte {
	n := d.base + d.cr.InputOffset() - d.r.hashed
	b := d.r.advance(int(n))
	for len(b) > 0 && (b[len(b)-1] == '\n' || b[len(b)-1] == '\r') {
		b = b[:len(b)-1]
	}
	return b
}

func (d *csvDecoder) next(ev *Event) error {
	rec, err := d.cr.Read()
	if err == io.EOF {
		return io.EOF
	}
	if err != nil && !errors.As(err, &d.pe) {
		return err
	}
	d.line++
	raw := d.take()
	if err != nil {
		return d.reject(raw, fmt.Sprintf("csv: %v (column %d)", d.pe.Err, d.pe.Column))
	}
	if len(rec) < d.need {
		return d.reject(raw, fmt.Sprintf("too few fields (got %d, want %d)", len(rec), d.need))
	}
	ev.Line = d.line
	ev.Src, ev.Dst = rec[d.col[keySrc]], rec[d.col[keyDst]]
	if ev.Src == "" {
		return d.reject(raw, "empty src")
	}
	if ev.Dst == "" {
		return d.reject(raw, "empty dst")
	}
	if c := d.col[keyOp]; c >= 0 {
		op, ok := parseOp(rec[c])
		if !ok {
			return d.reject(raw, fmt.Sprintf("bad op %q", rec[c]))
		}
		ev.Op = op
	}
	if c := d.col[keyTS]; c >= 0 && rec[c] != "" {
		t, err := ParseTime(rec[c])
		if err != nil {
			return d.reject(raw, fmt.Sprintf("bad ts %q", rec[c]))
		}
		ev.TS, ev.HasTS = t, true
	}
	if c := d.col[keyID]; c >= 0 {
		ev.ID = rec[c]
	}
	return nil
}

func (d *csvDecoder) reject(raw []byte, reason string) error {
	return &LineError{Line: d.line, Reason: reason, Raw: append([]byte(nil), raw...)}
}
