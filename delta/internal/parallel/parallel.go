// Package parallel runs the passes of orbitwatch's static recounts over
// the nodes of a graph on all cores. It is for CPU-bound passes whose
// work per node varies (hubs), not for I/O or for anything that must keep
// an order.
package parallel

import (
	"runtime"
	"sync"
	"sync/atomic"
)

// Workers returns how many goroutines ForEach uses: runtime.GOMAXPROCS.
func Workers() int { return max(1, runtime.GOMAXPROCS(0)) }

// ForEach calls f(worker, x) for every x in 0..n−1 on Workers()
// goroutines, worker being the goroutine's index in 0..Workers()−1. Each
// goroutine claims chunk consecutive nodes at a time, so a run of costly
// nodes (hubs sorted together) is spread over the workers. f must write
// only state owned by x or by its worker, or write atomically. ForEach
// returns when every call has returned.
func ForEach(n, chunk int, f func(worker int, x uint32)) {
	if chunk < 1 {
		panic("parallel: chunk must be positive")
	}
	var next atomic.Int64
	var wg sync.WaitGroup
	for w := range Workers() {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for {
				lo := int(next.Add(int64(chunk))) - chunk
				if lo >= n {
					return
				}
				for x := lo; x < min(lo+chunk, n); x++ {
					f(w, uint32(x))
				}
			}
		}()
	}
	wg.Wait()
}
