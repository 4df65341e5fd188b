//go:build !linux

package factored

import "time"

// threadClock falls back to the wall clock where RUSAGE_THREAD is missing.
type threadClock struct{ start time.Time }

func startClock() threadClock { return threadClock{start: time.Now()} }

func (c threadClock) stop() float64 { return time.Since(c.start).Seconds() }
