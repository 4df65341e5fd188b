//go:build linux

package factored

import (
	"runtime"
	"syscall"
)

// threadClock measures the CPU time of the calling goroutine's thread: it
// locks the goroutine to its thread, so on a shared machine the number
// tracks the work done, not what other processes take.
type threadClock struct{ start float64 }

func startClock() threadClock {
	runtime.LockOSThread()
	return threadClock{start: threadSeconds()}
}

// stop returns the seconds used since startClock and unlocks the thread.
func (c threadClock) stop() float64 {
	s := threadSeconds() - c.start
	runtime.UnlockOSThread()
	return s
}

func threadSeconds() float64 {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_THREAD, &ru); err != nil {
		panic("factored: getrusage: " + err.Error())
	}
	return float64(ru.Utime.Nano()+ru.Stime.Nano()) / 1e9
}
