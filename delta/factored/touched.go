package factored

import (
	"github.com/RoaringBitmap/roaring/v2"

	"orbitwatch/delta"
)

// Touched adds to dst the halo of the edge event uv: the nodes whose
// vectors an insertion or deletion of uv may change. A graphlet that
// changes holds u and v, so it lies within distance 1 of {u, v} for 3
// nodes and within distance 2 for 4:
//
//	3 nodes: {u, v} ∪ N(u) ∪ N(v)
//	4 nodes: that set ∪ N(N(u) ∪ N(v))
//
// The set is the same with or without uv in g, so Touched may run before
// or after the event. A checkpoint collects the halos of a batch in one
// bitmap and derives exactly those vectors. Touched allocates as dst grows
// (roaring containers); it is not on the update path.
func (c *Counter) Touched(g *delta.Graph, u, v uint32, dst *roaring.Bitmap) {
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
