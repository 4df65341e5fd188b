// Package cpuclock measures the CPU time of the calling goroutine's OS
// thread, for benchmarks on a shared machine: the figure tracks the work
// done, not the time other processes took the core. It is for
// benchmarks, never for product logic.
package cpuclock
