package undirected

import (
	"runtime"
	"slices"
	"sync"
	"sync/atomic"

	"github.com/RoaringBitmap/roaring/v2"

	"orbitwatch/delta"
)

// csr is a read-only snapshot of an undirected graph in compressed sparse
// rows, relabelled by rank: node ids are ordered by (degree, original id),
// so "x is below y" is x < y, and the neighbours of x, ascending, are
// adj[off[x]:off[x+1]] with those above x from up[x] on.
type csr struct {
	off  []int
	up   []int
	adj  []uint32
	orig []uint32 // orig[x] is the graph's id of x
}

func newCSR(g *delta.Graph) *csr {
	n := g.NumNodes()
	deg := make([]int, n)
	maxDeg := 0
	for x := range n {
		deg[x] = int(g.Out(uint32(x)).GetCardinality())
		maxDeg = max(maxDeg, deg[x])
	}
	// Counting sort by degree, stable in id.
	first := make([]int, maxDeg+2)
	for _, d := range deg {
		first[d+1]++
	}
	for d := 1; d < len(first); d++ {
		first[d] += first[d-1]
	}
	rank := make([]uint32, n)
	c := &csr{off: make([]int, n+1), up: make([]int, n), orig: make([]uint32, n)}
	for x, d := range deg {
		r := first[d]
		first[d]++
		rank[x] = uint32(r)
		c.orig[r] = uint32(x)
	}
	for r, x := range c.orig {
		c.off[r+1] = c.off[r] + deg[x]
	}
	c.adj = make([]uint32, c.off[n])
	its := make([]roaring.ManyIntIterator, workers())
	forEachNode(n, func(w int, r uint32) {
		row := c.adj[c.off[r]:c.off[r+1]]
		its[w].Initialize(g.Out(c.orig[r]))
		its[w].NextMany(row)
		for i, y := range row {
			row[i] = rank[y]
		}
		slices.Sort(row)
		i, _ := slices.BinarySearch(row, r)
		c.up[r] = c.off[r] + i
	})
	return c
}

func (c *csr) numNodes() int { return len(c.off) - 1 }

func (c *csr) deg(x uint32) int { return c.off[x+1] - c.off[x] }

func (c *csr) nbrs(x uint32) []uint32 { return c.adj[c.off[x]:c.off[x+1]] }

// above returns the neighbours of x above it.
func (c *csr) above(x uint32) []uint32 { return c.adj[c.up[x]:c.off[x+1]] }

// below returns the neighbours of x below it.
func (c *csr) below(x uint32) []uint32 { return c.adj[c.off[x]:c.up[x]] }

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

// sumParts adds the per-worker arrays into one of length n.
func sumParts(parts [][]int64, n int) []int64 {
	sum := make([]int64, n)
	for _, p := range parts {
		for i, v := range p {
			sum[i] += v
		}
	}
	return sum
}

// countCommon returns |a ∩ b| for ascending a and b: a merge when the
// lengths are alike, else a binary search of each element of the shorter
// in the rest of the longer.
func countCommon(a, b []uint32) int {
	if len(a) > len(b) {
		a, b = b, a
	}
	k := 0
	if len(b) > 16*len(a) {
		for _, v := range a {
			i, found := slices.BinarySearch(b, v)
			if found {
				k++
			}
			b = b[i:]
		}
		return k
	}
	i, j := 0, 0
	for i < len(a) && j < len(b) {
		switch {
		case a[i] < b[j]:
			i++
		case a[i] > b[j]:
			j++
		default:
			k++
			i++
			j++
		}
	}
	return k
}
