//go:build !unix

package undirected

import "time"

var processStart = time.Now()

// cpuSeconds falls back to the wall clock where getrusage is missing.
func cpuSeconds() float64 { return time.Since(processStart).Seconds() }
