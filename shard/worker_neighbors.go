package shard

import (
	"context"
	"fmt"
	"slices"
)

// Neighbors is a node's immediate neighbourhood in the worker's in-memory
// graph: up to a limit of its neighbours and the edges among those.
type Neighbors struct {
	Node string `json:"node"`
	// Seq is the log position the graph was read at: the last applied,
	// which may be ahead of the last complete cut.
	Seq uint64 `json:"seq"`
	// Degree is the node's full neighbour count; Neighbors holds the
	// highest-degree ones first (ties by id), at most the limit asked.
	Degree    int      `json:"degree"`
	Neighbors []string `json:"neighbors"`
	// Edges are the pairs (i, j), i < j, of Neighbors indices adjacent
	// to each other.
	Edges [][2]int `json:"edges"`
	// Error is set, with Found false, for an unknown node.
	Found bool   `json:"-"`
	Error string `json:"error,omitempty"`
}

// NeighborReader is a View that can also read the adjacency; the API's
// neighbours endpoint needs it.
type NeighborReader interface {
	Neighbors(ctx context.Context, node string, limit int) (Neighbors, error)
}

// MaxNeighbors bounds the limit of a neighbourhood read.
const MaxNeighbors = 200

type neighborsReq struct {
	node  string
	limit int
}

// Neighbors reads node's neighbourhood from the running worker's graph at
// the last applied event. limit is clipped to 1..MaxNeighbors.
func (w *Worker) Neighbors(ctx context.Context, node string, limit int) (Neighbors, error) {
	q := neighborsReq{node: node, limit: min(max(limit, 1), MaxNeighbors)}
	w.mu.RLock()
	defer w.mu.RUnlock()
	return w.neighbors(q), ctx.Err()
}

// neighbors answers q under the read lock. It walks the node's
// neighbours once and the chosen ones' bitmaps once each: O(degree +
// limit²) bitmap tests.
func (w *Worker) neighbors(q neighborsReq) Neighbors {
	r := Neighbors{Node: q.node, Seq: w.a.Seq()}
	x, ok := w.a.Lookup(q.node)
	if !ok {
		r.Error = fmt.Sprintf("unknown node %q at log seq %d", q.node, r.Seq)
		return r
	}
	r.Found = true
	g := w.a.Graph()
	var ids []uint32
	it := g.Neighbors(x).Iterator()
	for it.HasNext() {
		ids = append(ids, it.Next())
	}
	r.Degree = len(ids)
	slices.SortStableFunc(ids, func(a, b uint32) int { return g.Degree(b) - g.Degree(a) })
	ids = ids[:min(len(ids), q.limit)]
	r.Neighbors = make([]string, len(ids))
	r.Edges = [][2]int{}
	for i, y := range ids {
		r.Neighbors[i] = w.a.dict.Name(y)
		for j := i + 1; j < len(ids); j++ {
			if g.Adjacent(y, ids[j]) {
				r.Edges = append(r.Edges, [2]int{i, j})
			}
		}
	}
	return r
}
