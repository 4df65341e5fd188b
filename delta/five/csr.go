package five

import (
	"sort"

	"orbitwatch/delta"
)

// csr is an immutable copy of a simple undirected graph for one recount:
// sorted neighbour lists, a degree rank, and the higher-ranked
// neighbours of every node (the orientation the cycle listings use).
type csr struct {
	n    int
	off  []int    // neighbours of x are adj[off[x]:off[x+1]], ascending
	adj  []uint32 // ascending node ids
	rank []uint32 // position of x in the order by (degree, id)
	hoff []int    // higher-ranked neighbours of x are hi[hoff[x]:hoff[x+1]]
	hi   []uint32
}

func newCSR(g *delta.Graph) *csr {
	n := g.NumNodes()
	c := &csr{n: n, off: make([]int, n+1), rank: make([]uint32, n), hoff: make([]int, n+1)}
	for x := range n {
		c.off[x+1] = c.off[x] + g.Degree(uint32(x))
	}
	c.adj = make([]uint32, c.off[n])
	for x := range n {
		it := g.Neighbors(uint32(x)).Iterator()
		for i := c.off[x]; it.HasNext(); i++ {
			c.adj[i] = it.Next()
		}
	}
	order := make([]uint32, n)
	for i := range order {
		order[i] = uint32(i)
	}
	sort.Slice(order, func(i, j int) bool {
		a, b := order[i], order[j]
		if da, db := c.deg(a), c.deg(b); da != db {
			return da < db
		}
		return a < b
	})
	for r, x := range order {
		c.rank[x] = uint32(r)
	}
	for x := range n {
		h := 0
		for _, y := range c.nb(uint32(x)) {
			if c.rank[y] > c.rank[x] {
				h++
			}
		}
		c.hoff[x+1] = c.hoff[x] + h
	}
	c.hi = make([]uint32, c.hoff[n])
	for x := range n {
		i := c.hoff[x]
		for _, y := range c.nb(uint32(x)) {
			if c.rank[y] > c.rank[x] {
				c.hi[i] = y
				i++
			}
		}
	}
	return c
}

func (c *csr) nb(x uint32) []uint32 { return c.adj[c.off[x]:c.off[x+1]] }
func (c *csr) up(x uint32) []uint32 { return c.hi[c.hoff[x]:c.hoff[x+1]] }
func (c *csr) deg(x uint32) int     { return c.off[x+1] - c.off[x] }

// edge returns the index in adj of y in x's list, or −1 when x and y are
// not adjacent; binary search in x's list.
func (c *csr) edge(x, y uint32) int {
	lo, hi := c.off[x], c.off[x+1]
	for lo < hi {
		m := int(uint(lo+hi) >> 1)
		if c.adj[m] < y {
			lo = m + 1
		} else {
			hi = m
		}
	}
	if lo < c.off[x+1] && c.adj[lo] == y {
		return lo
	}
	return -1
}

// adjacent reports whether x and y are adjacent, searching the shorter
// list.
func (c *csr) adjacent(x, y uint32) bool {
	if c.deg(x) > c.deg(y) {
		x, y = y, x
	}
	return c.edge(x, y) >= 0
}
