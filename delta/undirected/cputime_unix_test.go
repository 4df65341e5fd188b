//go:build unix

package undirected

import "syscall"

// cpuSeconds returns the CPU time the process has used. On a shared machine
// it tracks the work done better than the wall clock does.
func cpuSeconds() float64 {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		panic("undirected: getrusage: " + err.Error())
	}
	return float64(ru.Utime.Nano()+ru.Stime.Nano()) / 1e9
}
