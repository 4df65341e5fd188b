package stream_test

import (
	"errors"
	"fmt"
	"io"
	"strings"

	"orbitwatch/stream"
)

// A payments export whose columns have other names, with one bad line.
func ExampleNewReader() {
	const log = "booked_at,payer,payee,op\n" +
		"2026-03-01T09:30:00Z,acct-17,acct-42,add\n" +
		"2026-03-01T09:31:00Z,acct-42,acct-17,reverse\n" +
		"1772357520,acct-17,acct-42,remove\n"
	r, err := stream.NewReader("export", strings.NewReader(log), stream.Options{
		Columns: map[string]string{"ts": "booked_at", "src": "payer", "dst": "payee"},
	})
	if err != nil {
		fmt.Println(err)
		return
	}
	for {
		ev, err := r.Next()
		var bad *stream.LineError
		switch {
		case err == io.EOF:
			return
		case errors.As(err, &bad):
			fmt.Println("rejected:", bad)
		case err != nil:
			fmt.Println(err)
			return
		default:
			fmt.Println("line", ev.FileLine, ev.Op, ev.Src, ev.Dst, ev.TS.Format("15:04:05"))
		}
	}
	// Output:
	// line 2 add acct-17 acct-42 09:30:00
	// rejected: line 3: bad op "reverse": want add or remove
	// line 4 remove acct-17 acct-42 09:32:00
}
