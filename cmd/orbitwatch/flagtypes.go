package main

import (
	"time"

	"orbitwatch/stream"
)

// spanFlag is a flag holding a span of time in the forms stream.ParseSpan
// reads ("30d", "1.5d", "12h"); a bad span is a bad flag value, so the
// command stops with a usage error before it does anything.
type spanFlag struct {
	d    time.Duration
	text string
}

func (s *spanFlag) String() string { return s.text }

func (s *spanFlag) Set(v string) error {
	d, err := stream.ParseSpan(v)
	if err != nil {
		return err
	}
	s.d, s.text = d, v
	return nil
}

// timeFlag is a flag holding an event time in every form stream.ParseTime
// reads, the forms event logs carry: a date alone, RFC 3339, a database
// export's "2026-03-01 09:17:00" (UTC unless a zone is given), Unix
// seconds or milliseconds.
type timeFlag struct {
	t    time.Time
	text string
	set  bool
}

func (f *timeFlag) String() string { return f.text }

func (f *timeFlag) Set(v string) error {
	t, err := stream.ParseTime(v)
	if err != nil {
		return err
	}
	f.t, f.text, f.set = t, v, true
	return nil
}

// timeForms is the help text's list of the forms a timeFlag takes.
const timeForms = "a date (2026-03-01), RFC 3339, 2026-03-01 09:17:00 (UTC unless a zone is given), or Unix seconds or milliseconds"
