package stream

import (
	"bufio"
	"io"
)

// jsonlDecoder reads one JSON object per line. A blank line (only spaces,
// tabs or a carriage return) is skipped and is not a data line.
type jsonlDecoder struct {
	r    *Reader
	keys [numKeys]string
	line int
}

func newJSONLDecoder(r *Reader, keys [numKeys]string) *jsonlDecoder {
	return &jsonlDecoder{r: r, keys: keys}
}

func (d *jsonlDecoder) next(ev *Event) error {
	for {
		n, eof := 0, false
		for {
			frag, err := d.r.br.ReadSlice('\n')
			n += len(frag)
			if err == bufio.ErrBufferFull {
				continue
			}
			if err != nil && err != io.EOF {
				return err
			}
			eof = err == io.EOF
			break
		}
		if n == 0 && eof {
			return io.EOF
		}
		line := d.r.advance(n)
		for len(line) > 0 && (line[len(line)-1] == '\n' || line[len(line)-1] == '\r') {
			line = line[:len(line)-1]
		}
		if skipSpace(line, 0) == len(line) {
			continue
		}
		d.line++
		if reason := decodeObject(line, &d.keys, ev); reason != "" {
			return &LineError{Line: d.line, Reason: reason, Raw: append([]byte(nil), line...)}
		}
		ev.Line = d.line
		return nil
	}
}
