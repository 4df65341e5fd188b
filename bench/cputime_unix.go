//go:build unix

package bench

import (
	"syscall"
	"time"
)

// cpuClock measures the CPU time of this process, all threads (the
// garbage collector's included): on a machine shared with other work it
// tracks the work done rather than the share of the cores obtained.
type cpuClock struct{ start time.Duration }

func startCPU() cpuClock { return cpuClock{processCPU()} }

// elapsed returns the CPU time used since startCPU.
func (c cpuClock) elapsed() time.Duration { return processCPU() - c.start }

func processCPU() time.Duration {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		panic("bench: getrusage: " + err.Error())
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}
