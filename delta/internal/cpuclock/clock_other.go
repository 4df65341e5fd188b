//go:build !linux

package cpuclock

import "time"

// Clock falls back to the wall clock where RUSAGE_THREAD is missing.
type Clock struct{ start time.Time }

// Start starts the clock.
func Start() Clock { return Clock{start: time.Now()} }

// Stop returns the wall time since Start.
func (c Clock) Stop() time.Duration { return time.Since(c.start) }

// Lap returns the wall time since Start.
func (c Clock) Lap() time.Duration { return time.Since(c.start) }
