package stream

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"slices"
)

// csvDecoder reads CSV with a header row, one record per line. Quoting is
// RFC 4180 within a line: a field may be quoted, a quote inside it
// doubled; a quoted field cannot hold a line break, so an unbalanced
// quote rejects its own line and the next line is read afresh.
type csvDecoder struct {
	col     [numKeys]int // field index of each key, -1 when absent
	nfields int          // fields of the header, which every record must have
	fields  [][]byte
	scratch []byte
}

func newCSVDecoder(r *Reader) (*csvDecoder, error) {
	d := &csvDecoder{}
	var line []byte
	for {
		var size int
		var err error
		line, size, err = r.lr.next()
		if err == io.EOF {
			return nil, errors.New("csv: empty input: a header row is required")
		}
		if err != nil {
			return nil, fmt.Errorf("csv header: %w", err)
		}
		if size > MaxLineBytes {
			return nil, fmt.Errorf("csv header: line %d is longer than %d bytes", r.lr.lines, MaxLineBytes)
		}
		if len(line) > 0 {
			break
		}
		r.blank++
	}
	r.header = 1
	fields, reason := splitCSV(line, nil, &d.scratch)
	if reason != "" {
		return nil, fmt.Errorf("csv header (line %d): %s", r.lr.lines, reason)
	}
	header := make([]string, len(fields))
	for i, f := range fields {
		header[i] = string(f)
	}
	d.nfields = len(header)
	for k := range d.col {
		d.col[k] = -1
	}
	for i, h := range header {
		used := false
		for k, name := range r.keys {
			if h != name || (k == keyAmount && r.filler.min == nil) {
				continue
			}
			if d.col[k] >= 0 {
				return nil, fmt.Errorf("csv header: column %q appears twice", h)
			}
			d.col[k], used = i, true
		}
		if !used && !slices.Contains(r.unused, h) {
			r.unused = append(r.unused, h)
		}
	}
	need := []int{keySrc, keyDst}
	if r.filler.min != nil {
		need = append(need, keyAmount)
	}
	for _, k := range need {
		if d.col[k] < 0 {
			return nil, &MissingColumnError{Key: keyNames[k], Name: r.keys[k], Found: header}
		}
	}
	return d, nil
}

func (d *csvDecoder) cells(line []byte, c *[numKeys]cell) string {
	fields, reason := splitCSV(line, d.fields[:0], &d.scratch)
	d.fields = fields
	if reason != "" {
		return reason
	}
	if len(fields) != d.nfields {
		return fmt.Sprintf("wrong number of fields: %d, the header has %d", len(fields), d.nfields)
	}
	for k, i := range d.col {
		c[k] = cell{}
		if i >= 0 && len(fields[i]) > 0 {
			c[k] = cell{text: fields[i], kind: kindString}
		}
	}
	return ""
}

// splitCSV appends the fields of one CSV line to out and returns them, or
// the reason the line is malformed. Unquoted fields and quoted fields
// without doubled quotes point into line; others into *scratch, which is
// grown to len(line) first so that the slices handed out stay valid.
func splitCSV(line []byte, out [][]byte, scratch *[]byte) ([][]byte, string) {
	if cap(*scratch) < len(line) {
		*scratch = make([]byte, 0, len(line))
	}
	sc := (*scratch)[:0]
	for i, field := 0, 1; ; field++ {
		if i < len(line) && line[i] == '"' {
			start, j, doubled := i+1, i+1, false
			for {
				k := bytes.IndexByte(line[j:], '"')
				if k < 0 {
					return out, fmt.Sprintf("unbalanced quote: field %d opens a quote that its line does not close", field)
				}
				j += k
				if j+1 < len(line) && line[j+1] == '"' {
					doubled, j = true, j+2
					continue
				}
				break
			}
			content := line[start:j]
			if doubled {
				off := len(sc)
				for p := 0; p < len(content); p++ {
					sc = append(sc, content[p])
					if content[p] == '"' {
						p++
					}
				}
				content = sc[off:]
			}
			out = append(out, content)
			i = j + 1
			if i == len(line) {
				return out, ""
			}
			if line[i] != ',' {
				return out, fmt.Sprintf("text after a closing quote: field %d", field)
			}
			i++
			continue
		}
		end := len(line)
		if k := bytes.IndexByte(line[i:], ','); k >= 0 {
			end = i + k
		}
		f := line[i:end]
		if bytes.IndexByte(f, '"') >= 0 {
			return out, fmt.Sprintf("bare quote: in unquoted field %d", field)
		}
		out = append(out, f)
		if end == len(line) {
			return out, ""
		}
		i = end + 1
	}
}
