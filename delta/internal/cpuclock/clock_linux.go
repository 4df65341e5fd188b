//go:build linux

package cpuclock

import (
	"runtime"
	"syscall"
	"time"
	"unsafe"
)

// Clock is a started thread CPU clock.
type Clock struct{ start time.Duration }

// Start locks the calling goroutine to its thread and starts a clock of
// that thread's CPU time (user plus system).
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

// thread reads CLOCK_THREAD_CPUTIME_ID, which counts in nanoseconds
// (getrusage's RUSAGE_THREAD ticks in milliseconds on many kernels).
func thread() time.Duration {
	const clockThreadCPUTime = 3 // CLOCK_THREAD_CPUTIME_ID, clock_gettime(2)
	var ts syscall.Timespec
	if _, _, errno := syscall.Syscall(syscall.SYS_CLOCK_GETTIME, clockThreadCPUTime, uintptr(unsafe.Pointer(&ts)), 0); errno != 0 {
		panic("cpuclock: clock_gettime: " + errno.Error())
	}
	return time.Duration(ts.Nano())
}
