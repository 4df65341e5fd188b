package shard

import (
	"cmp"
	"context"
	"errors"
	"fmt"
	"net/http"
	"slices"
	"time"

	"orbitwatch/delta"
	"orbitwatch/storage"
)

// Neighbors is a node's neighbourhood, up to two hops: the node, its
// busiest neighbours, and for each of those its busiest other neighbours,
// with every tie among the nodes drawn and, per node, how many of its ties
// are not drawn.
type Neighbors struct {
	Node string `json:"node"`
	// Kind is the graph kind ("undirected", "directed", "signed"): it says
	// whether ties carry a direction or a sign.
	Kind string `json:"kind"`
	// Seq is the log position the graph was read at: the last applied
	// (which may be ahead of the last complete cut), or the cut of an
	// as-of read; EventTime the event-time watermark there.
	Seq       uint64    `json:"seq"`
	EventTime time.Time `json:"event_time,omitzero"`
	// Degree is the node's full neighbour count; Neighbors holds the
	// highest-degree ones first (ties by node number, the order of first
	// appearance in the log), at most the limit asked.
	Degree    int      `json:"degree"`
	Neighbors []string `json:"neighbors"`
	// Edges are the pairs (i, j), i < j, of Neighbors indices adjacent
	// to each other.
	Edges [][2]int `json:"edges"`
	// Nodes are the nodes drawn: the node itself first (hop 0), then
	// Neighbors in their order (hop 1), then the second hop (hop 2) when
	// asked; Ties every tie among them, each once.
	Nodes []HoodNode `json:"nodes"`
	Ties  []Tie      `json:"ties"`
	// Error is set, with Found false, when the node or the cut asked for
	// is not there; Status is then 404 or 410 (before the retained
	// history).
	Found  bool   `json:"-"`
	Status int    `json:"-"`
	Error  string `json:"error,omitempty"`
}

// HoodNode is one node of a neighbourhood drawing.
type HoodNode struct {
	ID     string `json:"id"`
	Hop    int    `json:"hop"`
	Degree int    `json:"degree"`
	// Hidden is how many of the node's ties the drawing leaves out.
	Hidden int `json:"hidden"`
	// Via is, for a second-hop node, the index in Nodes of the neighbour
	// whose pick it was (a drawing puts it beside that one).
	Via int `json:"via,omitempty"`
}

// Tie is one tie between Nodes[A] and Nodes[B]. Dir, for directed kinds,
// is "out" for payments A→B, "in" for B→A, "both" for both; Sign, for the
// signed kind, is "+" or "-" (a negative tie: a dispute, a chargeback).
type Tie struct {
	A    int    `json:"a"`
	B    int    `json:"b"`
	Dir  string `json:"dir,omitempty"`
	Sign string `json:"sign,omitempty"`
}

// NeighborQuery asks for a neighbourhood.
type NeighborQuery struct {
	Node string
	// Limit is the most neighbours drawn (1..MaxNeighbors); Far the most
	// second-hop nodes drawn per neighbour (0: one hop only; at most
	// MaxFar), with at most MaxFarNodes second-hop nodes in all.
	Limit, Far int
	// At or Seq read as of a cut (see ReadRequest); neither reads now.
	At  time.Time
	Seq uint64
}

// NeighborReader is a View that can also read the in-memory adjacency;
// the API's neighbours endpoint needs it for reads now (as-of reads come
// from the store, NeighborhoodStored).
type NeighborReader interface {
	Neighborhood(ctx context.Context, q NeighborQuery) (Neighbors, error)
}

// Bounds of a neighbourhood read.
const (
	MaxNeighbors = 200
	MaxFar       = 20
	MaxFarNodes  = 120
)

// Neighbors reads node's immediate neighbourhood from the running
// worker's graph at the last applied event; limit is clipped to
// 1..MaxNeighbors.
func (w *Worker) Neighbors(ctx context.Context, node string, limit int) (Neighbors, error) {
	return w.Neighborhood(ctx, NeighborQuery{Node: node, Limit: limit})
}

// Neighborhood reads q from the running worker's graph at the last
// applied event (q.At and q.Seq are not looked at).
func (w *Worker) Neighborhood(ctx context.Context, q NeighborQuery) (Neighbors, error) {
	w.mu.RLock()
	defer w.mu.RUnlock()
	return NeighborhoodNow(ctx, w.a, q), ctx.Err()
}

// NeighborhoodNow reads q from a's graph at its last applied event. The
// caller keeps a from changing meanwhile. It costs O(Σ degree) over the
// node and the neighbours drawn, plus a degree look-up per candidate.
func NeighborhoodNow(ctx context.Context, a *Applier, q NeighborQuery) Neighbors {
	r := Neighbors{Node: q.Node, Kind: a.Graph().Kind().String(), Seq: a.Seq(), EventTime: a.Watermark()}
	x, ok := a.Lookup(q.Node)
	if !ok {
		r.Status, r.Error = http.StatusNotFound, fmt.Sprintf("unknown node %q at log seq %d", q.Node, r.Seq)
		return r
	}
	if err := drawHood(ctx, &memGraph{g: a.Graph(), dict: a.Dict()}, a.Graph().Kind(), x, q, &r); err != nil {
		r.Found, r.Status, r.Error = false, http.StatusInternalServerError, err.Error()
	}
	return r
}

// NeighborhoodStored reads q as of a cut of st: the latest cut whose
// event-time watermark is ≤ q.At when At is set, else the latest ≤ q.Seq.
// Degrees there cost a key scan each: past maxDegreeReads of them the
// second hop is ranked by ties into the drawing and node number alone
// (the degrees shown stay exact).
func NeighborhoodStored(ctx context.Context, st *storage.Store, q NeighborQuery) Neighbors {
	r := Neighbors{Node: q.Node, Kind: st.Settings().Kind.String()}
	seq, status, msg := CutFor(st, q.At, q.Seq)
	if status != http.StatusOK {
		r.Status, r.Error = status, msg
		return r
	}
	src, err := st.SourceAt(seq)
	switch {
	case errors.Is(err, storage.ErrNoCheckpoint):
		r.Status, r.Error = http.StatusNotFound, fmt.Sprintf("no complete cut at or before seq %d", seq)
		return r
	case errors.Is(err, storage.ErrRetention):
		r.Status, r.Error = http.StatusGone, fmt.Sprintf("seq %d is before the retained history (floor %d)", seq, st.Floor())
		return r
	case err != nil:
		r.Status, r.Error = http.StatusInternalServerError, err.Error()
		return r
	}
	defer src.Close()
	cut := src.Checkpoint()
	r.Seq, r.EventTime = cut.Seq, cut.Watermark
	x, err := src.Node(q.Node)
	if errors.Is(err, storage.ErrUnknownNode) {
		r.Status, r.Error = http.StatusNotFound, fmt.Sprintf("unknown node %q at cut %d", q.Node, cut.Seq)
		return r
	}
	if err == nil {
		err = drawHood(ctx, &storedGraph{src: src, degrees: map[uint32]int{}}, st.Settings().Kind, x, q, &r)
	}
	if err != nil {
		r.Found, r.Status, r.Error = false, http.StatusInternalServerError, err.Error()
	}
	return r
}

// hoodGraph is the adjacency a neighbourhood is drawn from: the worker's
// graph now, or a stored cut.
type hoodGraph interface {
	adjacent(x uint32, dst []delta.Adj) ([]delta.Adj, error)
	// degree returns x's neighbour count; cheap reports whether the
	// ranking may ask for it without limit.
	degree(x uint32) (int, error)
	cheap() bool
	name(x uint32) (string, error)
}

type memGraph struct {
	g    *delta.Graph
	dict *storage.Dict
}

func (m *memGraph) adjacent(x uint32, dst []delta.Adj) ([]delta.Adj, error) {
	dst = dst[:0]
	it := m.g.Neighbors(x).Iterator()
	for it.HasNext() {
		y := it.Next()
		dst = append(dst, delta.Adj{Node: y, Links: m.g.Links(x, y)})
	}
	return dst, nil
}
func (m *memGraph) degree(x uint32) (int, error)  { return m.g.Degree(x), nil }
func (m *memGraph) cheap() bool                   { return true }
func (m *memGraph) name(x uint32) (string, error) { return m.dict.Name(x), nil }

// maxDegreeReads bounds the degree look-ups of one stored neighbourhood
// read that only rank candidates.
const maxDegreeReads = 20000

type storedGraph struct {
	src     *storage.Source
	degrees map[uint32]int
	buf     []delta.Adj
}

func (s *storedGraph) adjacent(x uint32, dst []delta.Adj) ([]delta.Adj, error) {
	return s.src.Adjacent(x, dst)
}
func (s *storedGraph) degree(x uint32) (int, error) {
	if d, ok := s.degrees[x]; ok {
		return d, nil
	}
	var err error
	if s.buf, err = s.src.Adjacent(x, s.buf); err != nil {
		return 0, err
	}
	s.degrees[x] = len(s.buf)
	return len(s.buf), nil
}
func (s *storedGraph) cheap() bool                   { return len(s.degrees) < maxDegreeReads }
func (s *storedGraph) name(x uint32) (string, error) { return s.src.Name(x) }

// candidate is a node ranked for a place in the drawing.
type candidate struct {
	x      uint32
	shared int // ties into the nodes already drawn (second hop)
	degree int // -1: not read (ranked after those read)
}

func byRank(a, b candidate) int {
	if c := cmp.Compare(b.shared, a.shared); c != 0 {
		return c
	}
	if c := cmp.Compare(b.degree, a.degree); c != 0 {
		return c
	}
	return cmp.Compare(a.x, b.x)
}

// rankDegree is x's degree for ranking: -1 once an expensive graph has
// spent its look-ups.
func rankDegree(g hoodGraph, x uint32) (int, error) {
	if !g.cheap() {
		return -1, nil
	}
	return g.degree(x)
}

// drawHood fills r (from Degree on) with the neighbourhood of x in g.
// First hop: x's neighbours by degree, highest first, up to q.Limit.
// Second hop: for each drawn neighbour y in turn, up to q.Far of y's
// neighbours that are neither x, x's neighbours, nor drawn yet, ranked by
// ties into the first hop (nodes that share several of x's counterparties
// close 4-cycles with x), then degree, then number.
func drawHood(ctx context.Context, g hoodGraph, kind delta.Kind, x uint32, q NeighborQuery, r *Neighbors) error {
	limit, far := min(max(q.Limit, 1), MaxNeighbors), min(max(q.Far, 0), MaxFar)
	adj0, err := g.adjacent(x, nil)
	if err != nil {
		return err
	}
	r.Found, r.Degree = true, len(adj0)
	links := map[uint32]delta.Link{}
	first := make([]candidate, len(adj0))
	for i, a := range adj0 {
		d, err := rankDegree(g, a.Node)
		if err != nil {
			return err
		}
		first[i] = candidate{x: a.Node, degree: d}
		links[a.Node] = a.Links
	}
	slices.SortStableFunc(first, byRank)
	first = first[:min(len(first), limit)]

	pos := map[uint32]int{x: 0}
	ids := []uint32{x}
	for _, c := range first {
		pos[c.x] = len(ids)
		ids = append(ids, c.x)
		r.Ties = append(r.Ties, tie(kind, 0, pos[c.x], links[c.x]))
	}
	// Ties among the first hop, and each neighbour's candidates.
	adj := make([][]delta.Adj, len(ids))
	var via []int // the picking neighbour of each node drawn, from the second hop on
	seen := map[uint32]*candidate{}
	var cands []*candidate
	for i := 1; i < len(ids); i++ {
		if err := ctx.Err(); err != nil {
			return err
		}
		if adj[i], err = g.adjacent(ids[i], nil); err != nil {
			return err
		}
		for _, a := range adj[i] {
			if j, ok := pos[a.Node]; ok {
				if j > i {
					r.Ties = append(r.Ties, tie(kind, i, j, a.Links))
				}
				continue
			}
			if _, near := links[a.Node]; far == 0 || near {
				// A neighbour of x left out of the first hop stays out:
				// it is no second-hop node.
				continue
			}
			if c, ok := seen[a.Node]; ok {
				c.shared++
				continue
			}
			c := &candidate{x: a.Node, shared: 1}
			seen[a.Node], cands = c, append(cands, c)
		}
	}
	if far > 0 {
		for _, c := range cands {
			if c.degree, err = rankDegree(g, c.x); err != nil {
				return err
			}
		}
		// Each neighbour in turn picks its best candidates not yet taken.
		taken := 0
		via = make([]int, len(ids))
		for i := 1; i <= len(first) && taken < MaxFarNodes; i++ {
			var mine []candidate
			for _, a := range adj[i] {
				if c, ok := seen[a.Node]; ok {
					if _, drawn := pos[a.Node]; !drawn {
						mine = append(mine, *c)
					}
				}
			}
			slices.SortFunc(mine, byRank)
			for _, c := range mine[:min(len(mine), far, MaxFarNodes-taken)] {
				pos[c.x] = len(ids)
				ids = append(ids, c.x)
				via = append(via, i)
				taken++
			}
		}
		// Every tie from a first-hop node to a drawn second-hop node.
		for i := 1; i <= len(first); i++ {
			for _, a := range adj[i] {
				if j, ok := pos[a.Node]; ok && j > len(first) {
					r.Ties = append(r.Ties, tie(kind, i, j, a.Links))
				}
			}
		}
	}
	if err := fillHood(g, ids, len(first), r); err != nil {
		return err
	}
	for i := len(first) + 1; i < len(ids); i++ {
		r.Nodes[i].Via = via[i]
	}
	return nil
}

// fillHood writes the nodes drawn (ids; 1..nFirst the first hop) with
// their degrees and hidden ties, and the compatible Neighbors and Edges.
func fillHood(g hoodGraph, ids []uint32, nFirst int, r *Neighbors) error {
	drawn := make([]int, len(ids))
	for _, t := range r.Ties {
		drawn[t.A]++
		drawn[t.B]++
	}
	r.Nodes = make([]HoodNode, len(ids))
	r.Neighbors = make([]string, 0, nFirst)
	r.Edges = [][2]int{}
	for i, y := range ids {
		name, err := g.name(y)
		if err != nil {
			return err
		}
		d, err := g.degree(y)
		if err != nil {
			return err
		}
		hop := 2
		switch {
		case i == 0:
			hop = 0
		case i <= nFirst:
			hop = 1
			r.Neighbors = append(r.Neighbors, name)
		}
		r.Nodes[i] = HoodNode{ID: name, Hop: hop, Degree: d, Hidden: d - drawn[i]}
	}
	for _, t := range r.Ties {
		if t.A > 0 && t.B <= nFirst {
			r.Edges = append(r.Edges, [2]int{t.A - 1, t.B - 1})
		}
	}
	slices.SortFunc(r.Edges, func(e, f [2]int) int { return cmp.Or(cmp.Compare(e[0], f[0]), cmp.Compare(e[1], f[1])) })
	if r.Ties == nil {
		r.Ties = []Tie{}
	}
	return nil
}

// tie describes the tie from Nodes[a] to Nodes[b] of a graph of kind,
// joined by l (seen from a).
func tie(kind delta.Kind, a, b int, l delta.Link) Tie {
	t := Tie{A: a, B: b}
	switch kind {
	case delta.Signed:
		t.Sign = "+"
		if l&delta.LinkNeg != 0 {
			t.Sign = "-"
		}
	case delta.Directed:
		switch l & (delta.LinkOut | delta.LinkIn) {
		case delta.LinkOut:
			t.Dir = "out"
		case delta.LinkIn:
			t.Dir = "in"
		default:
			t.Dir = "both"
		}
	}
	return t
}
