package stream

import (
	"encoding/csv"
	"io"
	"strconv"
)

// RejectWriter writes rejected lines as CSV with the header
// "source,line,reason,raw": the source name (the path given to Open, or
// "stdin"), the line number as an editor shows it (LineError.FileLine),
// the reason, and the line as read. The source column is always there, so
// one file of rejects can gather several sources and every file of
// rejects has the same columns. Call Flush at the end.
type RejectWriter struct {
	w      *csv.Writer
	header bool
	rec    [4]string
	n      int
}

// NewRejectWriter returns a RejectWriter on w. The header is written with
// the first reject, or by Flush when there was none, so the output always
// has it.
func NewRejectWriter(w io.Writer) *RejectWriter {
	return &RejectWriter{w: csv.NewWriter(w)}
}

// Write writes one reject of the named source.
func (rw *RejectWriter) Write(source string, e *LineError) error {
	if err := rw.writeHeader(); err != nil {
		return err
	}
	rw.rec = [4]string{source, strconv.Itoa(e.FileLine), e.Reason, string(e.Raw)}
	rw.n++
	return rw.w.Write(rw.rec[:])
}

// Count is the number of rejects written.
func (rw *RejectWriter) Count() int { return rw.n }

// Flush writes out buffered rejects and returns the first write error.
func (rw *RejectWriter) Flush() error {
	if err := rw.writeHeader(); err != nil {
		return err
	}
	rw.w.Flush()
	return rw.w.Error()
}

func (rw *RejectWriter) writeHeader() error {
	if rw.header {
		return nil
	}
	rw.header = true
	return rw.w.Write([]string{"source", "line", "reason", "raw"})
}
