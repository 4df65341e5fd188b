package stream

import "fmt"

// LineError is a rejected data line (record) of a source. The reader goes
// on at the next line on the following Next call.
type LineError struct {
	// Line is the 1-based data line number (header excluded).
	Line int
	// Reason says in plain words what is wrong.
	Reason string
	// Raw is the line as read, without its line ending. It is the caller's
	// to keep: the reader does not reuse it.
	Raw []byte
}

func (e *LineError) Error() string {
	return fmt.Sprintf("line %d: %s", e.Line, e.Reason)
}
