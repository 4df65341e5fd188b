//go:build !linux

package generic

// threadCPU is not measured outside Linux; the benchmarks then report a
// CPU time of 0.
func threadCPU() int64 { return 0 }
