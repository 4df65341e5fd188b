package gen

import (
	"bufio"
	"io"
	"time"
)

// Namer appends the name of node id to dst (Population.AppendName is one).
type Namer func(dst []byte, id uint32) []byte

// LogHeader is the first line of an orbitwatch CSV event log.
const LogHeader = "ts,op,src,dst"

// LogWriter writes events as an orbitwatch CSV event log: the header
// ts,op,src,dst, then one line per event with ts in RFC 3339 UTC, op add or
// remove and the two node names. Names made by Population contain no comma
// or quote, so no field needs quoting. Write allocates nothing.
type LogWriter struct {
	w      *bufio.Writer
	name   Namer
	line   []byte
	n      int64
	header bool
}

// NewLogWriter returns a writer to w naming nodes with name. The header is
// written by the first Write or by Flush.
func NewLogWriter(w io.Writer, name Namer) *LogWriter {
	return &LogWriter{w: bufio.NewWriterSize(w, 1<<16), name: name, line: make([]byte, 0, 128)}
}

// Write writes one event line.
func (l *LogWriter) Write(e Event) error {
	b := l.line[:0]
	if !l.header {
		b = append(b, LogHeader+"\n"...)
		l.header = true
	}
	b = time.Unix(e.Unix, 0).UTC().AppendFormat(b, time.RFC3339)
	b = append(b, ',')
	b = append(b, e.Op.String()...)
	b = append(b, ',')
	b = l.name(b, e.U)
	b = append(b, ',')
	b = l.name(b, e.V)
	b = append(b, '\n')
	l.line = b
	l.n++
	_, err := l.w.Write(b)
	return err
}

// Lines returns the number of events written.
func (l *LogWriter) Lines() int64 { return l.n }

// Flush writes the header if nothing was written yet, then flushes.
func (l *LogWriter) Flush() error {
	if !l.header {
		if _, err := l.w.WriteString(LogHeader + "\n"); err != nil {
			return err
		}
		l.header = true
	}
	return l.w.Flush()
}
