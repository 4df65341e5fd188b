//go:build linux

package cpuclock

import (
	"runtime"
	"syscall"
	"time"
)

// Clock is a started thread CPU clock.
type Clock struct{ start time.Duration }

// Start locks the calling goroutine to its thread and starts a clock of
// that thread's CPU time (user plus system, getrusage RUSAGE_THREAD).
func Start() Clock {
	runtime.LockOSThread()
	return Clock{start: thread()}
}

// Stop returns the CPU time used since Start and unlocks the thread.
func (c Clock) Stop() time.Duration {
	d := thread() - c.start
	runtime.UnlockOSThread()
	return d
}

// Lap returns the CPU time used since Start and keeps the clock running.
func (c Clock) Lap() time.Duration { return thread() - c.start }

func thread() time.Duration {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_THREAD, &ru); err != nil {
		panic("cpuclock: getrusage: " + err.Error())
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}
