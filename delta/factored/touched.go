package factored

import (
	"math/bits"

	"github.com/RoaringBitmap/roaring/v2"

	"orbitwatch/delta"
)

// Touched calls visit, in increasing id order, for every node whose vector
// may have changed since the previous call of Touched (or since New or
// Load), and then forgets them. It is the halo of all the events since,
// computed once for the batch: with S the endpoints of those events and
// their neighbours at the time (the nodes whose maintained quantities or
// adjacency changed),
//
//	3 nodes: S (Vector reads only x's own quantities)
//	4 nodes: S ∪ N(S) (Vector also reads d, s1, t and tri(x,y) of y ∈ N(x))
//
// with N taken in the graph as it is now; a node that left N(S) during
// the batch did so by an event that made it an endpoint, so it is in S.
// The per-event cost is a bit per node of N(u) ∪ N(v), set while those
// lists are walked anyway; the cost here is Σ_{s∈S} d(s), at most 2|E|
// however many events the batch held. visit must not update c.
func (c *Counter) Touched(visit func(x uint32)) {
	if c.maxNodes == 3 {
		copy(c.halo, c.sources)
	} else {
		for w, word := range c.sources {
			c.halo[w] |= word
			for ; word != 0; word &= word - 1 {
				s := uint32(w<<6 + bits.TrailingZeros64(word))
				for _, y := range c.adj[s].nbr {
					c.halo[y>>6] |= 1 << (y & 63)
				}
			}
		}
	}
	clear(c.sources)
	for w, word := range c.halo {
		for ; word != 0; word &= word - 1 {
			visit(uint32(w<<6 + bits.TrailingZeros64(word)))
		}
	}
	clear(c.halo)
}

// Halo adds to dst the halo of one edge event uv: the nodes whose vectors
// inserting or deleting uv may change. A graphlet that changes holds u and
// v, so it lies within distance 1 of {u, v} for 3 nodes and within
// distance 2 for 4:
//
//	3 nodes: {u, v} ∪ N(u) ∪ N(v)
//	4 nodes: that set ∪ N(N(u) ∪ N(v))
//
// The set is the same with or without uv in g, so Halo may run before or
// after the event. It costs Σ_{w∈N(u)∪N(v)} d(w) bitmap unions, as much as
// the eager engine's walk: a checkpoint should use Touched, which expands
// a whole batch once. Halo allocates as dst grows.
func (c *Counter) Halo(g *delta.Graph, u, v uint32, dst *roaring.Bitmap) {
	dst.Add(u)
	dst.Add(v)
	dst.Or(g.Out(u))
	dst.Or(g.Out(v))
	if c.maxNodes == 3 {
		return
	}
	for _, x := range [2]uint32{u, v} {
		it := g.Out(x).Iterator()
		for it.HasNext() {
			dst.Or(g.Out(it.Next()))
		}
	}
}
