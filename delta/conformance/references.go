package conformance

import (
	"math/rand/v2"
	"testing"

	"orbitwatch/delta"
	"orbitwatch/delta/catalog"
	"orbitwatch/delta/internal/pyref"
)

// Orbit ids of the published undirected numbering (Pržulj 2007), which
// delta/catalog reproduces and tests.
const (
	orbitEdge     = 0
	orbitPathEnd  = 1
	orbitPathMid  = 2
	orbitTriangle = 3
)

// occurrences returns how many times graphlet gid occurs, from the orbit
// vectors: Σ_x count(x, o) / |o| for each orbit o of the graphlet, which
// must all agree and divide exactly (each occurrence puts |o| nodes in o).
func (rp *replay) occurrences(v *delta.Vectors, gid int) (uint64, bool) {
	var n uint64
	seen := map[int]bool{}
	first := true
	for _, o := range rp.c.Graphlets[gid].Orbits {
		if seen[o] {
			continue
		}
		seen[o] = true
		var s uint64
		for x := 0; x < v.NumNodes(); x++ {
			s += v.Get(uint32(x), o)
		}
		size := uint64(len(rp.c.Orbits[o].Positions))
		if s%size != 0 || (!first && s/size != n) {
			return 0, false
		}
		n, first = s/size, false
	}
	return n, true
}

// queue adds a check to run once the references have answered.
func (rp *replay) queue(check func()) {
	rp.ref.checks = append(rp.ref.checks, check)
	rp.queued++
}

// queueCheckpoint queues the networkx checks of the current graph against
// the vectors v, which the checkpoint found equal to brute.
func (rp *replay) queueCheckpoint(v *delta.Vectors) {
	gr := pyref.FromDelta(rp.g)
	cut := rp.cut
	if rp.c.Kind == delta.Signed {
		rp.queueSigned(cut, gr, v)
		return
	}
	deg := rp.ref.batch.Degrees(gr)
	if rp.c.Kind == delta.Undirected {
		tri := rp.ref.batch.Triangles(gr)
		rp.queue(func() { rp.checkUndirected(cut, gr, v, *deg, *tri) })
		return
	}
	rp.queue(func() { rp.checkDirectedDegrees(cut, v, *deg) })
	if rp.c.MaxNodes >= 3 {
		census := rp.ref.batch.TriadicCensus(gr)
		rp.queue(func() { rp.checkCensus(cut, v, census) })
	}
}

// checkUndirected holds orbits 0–3 against networkx.degree and
// networkx.triangles, and orbits 1 and 2 against identities derived from
// the definitions: x is the middle of an induced 3-path for each pair of
// its neighbours that is not adjacent, so orbit 2 = C(d,2) − t; x is an end
// of one for each w ∈ N(x) and y ∈ N(w) − x with y not adjacent to x, and
// the pairs (w, y) with y adjacent to x count each of x's triangles twice,
// so orbit 1 = Σ_{w∈N(x)} (d(w) − 1) − 2t.
func (rp *replay) checkUndirected(cut int, gr pyref.Graph, v *delta.Vectors, deg, tri []uint64) {
	rp.t.Helper()
	if len(deg) != gr.Nodes || len(tri) != gr.Nodes {
		rp.t.Fatalf("%s, checkpoint at event %d: networkx returned %d degrees, %d triangle counts for %d nodes", rp.label, cut, len(deg), len(tri), gr.Nodes)
	}
	nbrSum := make([]uint64, gr.Nodes)
	for _, e := range gr.Edges {
		nbrSum[e[0]] += deg[e[1]] - 1
		nbrSum[e[1]] += deg[e[0]] - 1
	}
	for x := uint32(0); int(x) < gr.Nodes; x++ {
		d, t := deg[x], tri[x]
		rp.expectOrbit(cut, v, x, orbitEdge, d, "networkx.degree")
		if rp.c.MaxNodes < 3 {
			continue
		}
		rp.expectOrbit(cut, v, x, orbitTriangle, t, "networkx.triangles")
		rp.expectOrbit(cut, v, x, orbitPathMid, d*(d-1)/2-t, "C(d,2) − triangles")
		rp.expectOrbit(cut, v, x, orbitPathEnd, nbrSum[x]-2*t, "Σ(d(w)−1) − 2·triangles")
	}
}

func (rp *replay) expectOrbit(cut int, v *delta.Vectors, x uint32, o int, want uint64, source string) {
	if got := v.Get(x, o); got != want {
		rp.t.Fatalf("%s, checkpoint at event %d: node %d orbit %d (%s): ours %d, %s %d", rp.label, cut, x, o, rp.c.Orbits[o].Name, got, source, want)
	}
}

// checkDirectedDegrees holds the 2-node orbits against networkx DiGraph
// degree (in + out arcs): degree(x) = Σ over 2-node orbits o of
// count(x, o) · (arcs at a position of o).
func (rp *replay) checkDirectedDegrees(cut int, v *delta.Vectors, deg []uint64) {
	rp.t.Helper()
	for x := uint32(0); int(x) < len(deg); x++ {
		var ours uint64
		for _, g := range rp.c.Graphlets {
			if g.Nodes != 2 {
				continue
			}
			seen := map[int]bool{}
			for p, o := range g.Orbits {
				if !seen[o] {
					seen[o] = true
					ours += v.Get(x, o) * uint64(arcsAt(g, p))
				}
			}
		}
		if ours != deg[x] {
			rp.t.Fatalf("%s, checkpoint at event %d: node %d: 2-node orbits give degree %d, networkx DiGraph.degree %d", rp.label, cut, x, ours, deg[x])
		}
	}
}

func arcsAt(g catalog.Graphlet, p int) int {
	n := 0
	for _, e := range g.Edges {
		if e[0] == p || e[1] == p {
			n++
		}
	}
	return n
}

// checkCensus holds the 3-node graphlet counts against
// networkx.triadic_census. Each MAN triad type is matched to a graphlet by
// classifying networkx.triad_graph's representative; the three
// disconnected types (003, 012, 102) must classify as disconnected and the
// 13 connected ones must hit the 13 connected 3-node graphlets once each.
func (rp *replay) checkCensus(cut int, v *delta.Vectors, census *pyref.Census) {
	rp.t.Helper()
	hit := map[int]string{}
	disconnected := 0
	for name, arcs := range census.Triads {
		gid, _ := rp.c.Lookup(3, catalog.Code(delta.Directed, arcs))
		if gid < 0 {
			disconnected++
			continue
		}
		if other, dup := hit[gid]; dup {
			rp.t.Fatalf("%s: triad types %s and %s both classify as graphlet %d", rp.label, other, name, gid)
		}
		hit[gid] = name
		ours, ok := rp.occurrences(v, gid)
		if !ok {
			rp.t.Fatalf("%s, checkpoint at event %d: orbit sums of graphlet %d (%s) are inconsistent", rp.label, cut, gid, rp.c.Graphlets[gid].Name)
		}
		if ours != census.Counts[name] {
			rp.t.Fatalf("%s, checkpoint at event %d: graphlet %d (%s): ours %d, networkx.triadic_census %s %d", rp.label, cut, gid, rp.c.Graphlets[gid].Name, ours, name, census.Counts[name])
		}
	}
	if len(hit) != rp.countGraphlets(3) || disconnected != 3 || len(census.Triads) != 16 {
		rp.t.Fatalf("%s: of %d triad types %d matched the %d connected 3-node graphlets and %d were disconnected; want 16 = 13 + 3", rp.label, len(census.Triads), len(hit), rp.countGraphlets(3), disconnected)
	}
}

func (rp *replay) countGraphlets(nodes int) int {
	n := 0
	for _, g := range rp.c.Graphlets {
		if g.Nodes == nodes {
			n++
		}
	}
	return n
}

// queueMotifs queues igraph motif censuses (Graph.motifs_randesu) of the
// final graph for sizes 3 up to MaxNodes (igraph has directed classes up
// to 4 nodes, undirected up to 6).
func (rp *replay) queueMotifs(v *delta.Vectors) {
	if rp.c.Kind == delta.Signed {
		rp.queueSignedMotifs(v)
		return
	}
	gr := pyref.FromDelta(rp.g)
	for size := 3; size <= rp.c.MaxNodes; size++ {
		ms := rp.ref.batch.Motifs(gr, size)
		rp.queue(func() { rp.checkMotifs(size, v, *ms) })
	}
}

// checkMotifs holds graphlet counts against igraph's motif census: each
// class is matched to a graphlet by classifying Graph.Isoclass's
// representative; igraph leaves the disconnected classes uncounted (NaN);
// every counted class's count must equal ours, and the connected classes
// must hit each graphlet of that size once.
func (rp *replay) checkMotifs(size int, v *delta.Vectors, ms []pyref.Motif) {
	rp.t.Helper()
	hit := map[int]int{}
	for _, m := range ms {
		gid, _ := rp.c.Lookup(size, catalog.Code(rp.c.Kind, m.Edges))
		if gid < 0 {
			if m.Counted {
				rp.t.Fatalf("%s, final graph: igraph counted disconnected %d-node class %d (%d)", rp.label, size, m.Class, m.Count)
			}
			continue
		}
		if !m.Counted {
			rp.t.Fatalf("%s, final graph: igraph left connected %d-node class %d uncounted", rp.label, size, m.Class)
		}
		if other, dup := hit[gid]; dup {
			rp.t.Fatalf("%s: igraph classes %d and %d both classify as graphlet %d", rp.label, other, m.Class, gid)
		}
		hit[gid] = m.Class
		ours, ok := rp.occurrences(v, gid)
		if !ok || ours != m.Count {
			rp.t.Fatalf("%s, final graph: graphlet %d (%s): ours %d (consistent %v), igraph motifs_randesu class %d %d", rp.label, gid, rp.c.Graphlets[gid].Name, ours, ok, m.Class, m.Count)
		}
	}
	if len(hit) != rp.countGraphlets(size) {
		rp.t.Fatalf("%s: igraph's %d-node classes matched %d graphlets, want %d", rp.label, size, len(hit), rp.countGraphlets(size))
	}
}

// karate streams networkx's karate_club_graph (Zachary 1977) edge by edge
// in networkx's order, then removes a seeded half of its edges, with all
// checks at checkpoints.
func karate(t testing.TB, s Subject, c *catalog.Catalog, ref *references) {
	t.Helper()
	kg, err := pyref.KarateClub()
	if err != nil {
		t.Fatalf("conformance: %s: karate club: %v", s.Name, err)
	}
	r := rand.New(rand.NewPCG(seed("karate club"), uint64(c.MaxNodes)))
	rp := newReplay(t, s, c, "karate club", kg.Nodes, ref)
	for _, e := range kg.Edges {
		rp.step(r, event{true, e[0], e[1], false}, kg.Nodes)
	}
	rp.checkpoint()
	order := r.Perm(len(kg.Edges))
	for _, i := range order[:len(order)/2] {
		e := kg.Edges[i]
		rp.step(r, event{false, e[0], e[1], false}, kg.Nodes)
	}
	rp.checkpoint()
	rp.finish()
}
