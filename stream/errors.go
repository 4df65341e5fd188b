package stream

import (
	"fmt"
	"strings"
)

// LineError is a rejected data line (record) of a source. The reader goes
// on at the next line on the following Next call.
type LineError struct {
	// Line is the record number, as Event.Line: the position the line
	// uses up.
	Line int
	// FileLine is the line of the source, as Event.FileLine: what an
	// editor shows and what messages name.
	FileLine int
	// Reason says in plain words what is wrong. The text before the first
	// ':' or '"' names the kind of fault and is the same for every line
	// with that fault.
	Reason string
	// Raw is the line as read, without its line ending (cut to its first
	// 4096 bytes when longer than MaxLineBytes). It is the caller's to
	// keep: the reader does not reuse it.
	Raw []byte
}

func (e *LineError) Error() string {
	return fmt.Sprintf("line %d: %s", e.FileLine, e.Reason)
}

// FilteredError is a well-formed event that Options.MinAmount drops. It
// uses up its record number like a reject but is no fault of the line.
type FilteredError struct {
	Line, FileLine int
	Reason         string
}

func (e *FilteredError) Error() string {
	return fmt.Sprintf("line %d: filtered: %s", e.FileLine, e.Reason)
}

// MissingColumnError is a CSV header without a column a key needs.
type MissingColumnError struct {
	// Key is our name for it (src, dst, amount), Name the header name
	// looked for, Found the header's columns.
	Key, Name string
	Found     []string
}

func (e *MissingColumnError) Error() string {
	return fmt.Sprintf("csv header: no column %q for %s (columns found: %s)", e.Name, e.Key, strings.Join(e.Found, ", "))
}
