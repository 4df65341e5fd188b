package undirected

import (
	"runtime"
	"sync"
	"sync/atomic"

	"github.com/RoaringBitmap/roaring/v2"

	"orbitwatch/delta"
)

// csr is a read-only snapshot of an undirected graph in compressed sparse
// rows: the neighbours of x, ascending, are adj[off[x]:off[x+1]].
type csr struct {
	off []int
	adj []uint32
}

func newCSR(g *delta.Graph) *csr {
	n := g.NumNodes()
	c := &csr{off: make([]int, n+1)}
	for x := 0; x < n; x++ {
		c.off[x+1] = c.off[x] + int(g.Out(uint32(x)).GetCardinality())
	}
	c.adj = make([]uint32, c.off[n])
	forEachNode(n, func(_ int, x uint32) {
		var it roaring.ManyIntIterator
		it.Initialize(g.Out(x))
		it.NextMany(c.adj[c.off[x]:c.off[x+1]])
	})
	return c
}

func (c *csr) numNodes() int { return len(c.off) - 1 }

func (c *csr) deg(x uint32) int { return c.off[x+1] - c.off[x] }

func (c *csr) nbrs(x uint32) []uint32 { return c.adj[c.off[x]:c.off[x+1]] }

// workers returns how many goroutines a pass over the nodes uses.
func workers() int { return max(1, runtime.GOMAXPROCS(0)) }

// forEachNode calls f(worker, x) for every node x in 0..n-1 on workers()
// goroutines. Nodes are handed out in chunks so hubs do not leave a core
// idle; f must only write state owned by x or by its worker index.
func forEachNode(n int, f func(worker int, x uint32)) {
	const chunk = 512
	var next atomic.Int64
	var wg sync.WaitGroup
	for w := range workers() {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for {
				lo := int(next.Add(chunk)) - chunk
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

// scratch returns worker w's zeroed array of length n from parts, making it
// on first use so idle workers cost nothing.
func scratch[T any](parts [][]T, w, n int) []T {
	if parts[w] == nil {
		parts[w] = make([]T, n)
	}
	return parts[w]
}
