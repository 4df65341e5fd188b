package generic

import "syscall"

// threadCPU returns the CPU time the calling OS thread has used, user plus
// system, in nanoseconds; the caller locks itself to its thread. On a
// shared machine it leaves out the time other processes took the core.
func threadCPU() int64 {
	var ru syscall.Rusage
	const rusageThread = 1 // RUSAGE_THREAD, getrusage(2)
	if err := syscall.Getrusage(rusageThread, &ru); err != nil {
		return 0
	}
	return ru.Utime.Nano() + ru.Stime.Nano()
}
