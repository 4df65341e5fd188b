package conformance

import (
	"math/rand/v2"

	"orbitwatch/delta"
)

// event is one edge event: add or remove of {u,v} (arc u→v when
// directed), of the negative sign when neg (Signed graphs only).
type event struct {
	add  bool
	u, v uint32
	neg  bool
}

// stream is one seeded event-stream shape. next returns event i given the
// graph as the earlier events left it.
type stream struct {
	name   string
	nodes  int
	events int
	next   func(r *rand.Rand, g *delta.Graph, i int) event
}

// pair returns two distinct random nodes of 0..n−1.
func pair(r *rand.Rand, n int) (uint32, uint32) {
	u := r.IntN(n)
	v := r.IntN(n - 1)
	if v >= u {
		v++
	}
	return uint32(u), uint32(v)
}

// existing returns a random present edge (u<v undirected) or arc, and
// false when the graph has none.
func existing(r *rand.Rand, g *delta.Graph) (uint32, uint32, bool) {
	if g.NumEdges() == 0 {
		return 0, 0, false
	}
	pick := r.IntN(g.NumEdges())
	var a, b uint32
	i := 0
	g.ForEachEdge(func(u, v uint32, _ uint32) {
		if i == pick {
			a, b = u, v
		}
		i++
	})
	return a, b, true
}

// addOrRemove adds a random pair with probability pAdd, else removes a
// random present edge (adding when there is none).
func addOrRemove(r *rand.Rand, g *delta.Graph, n int, pAdd float64) event {
	if r.Float64() >= pAdd {
		if u, v, ok := existing(r, g); ok {
			return event{false, u, v, false}
		}
	}
	u, v := pair(r, n)
	return event{true, u, v, false}
}

// streams returns the shapes run for a kind; counts are halved in short
// mode.
func streams(kind delta.Kind, short bool) []stream {
	if kind == delta.Signed {
		return signedStreams(short)
	}
	scale := func(n int) int {
		if short {
			return n / 2
		}
		return n
	}
	s := []stream{
		{"insert-heavy", 14, scale(150), func(r *rand.Rand, g *delta.Graph, _ int) event {
			return addOrRemove(r, g, 14, 0.85)
		}},
		{"delete-heavy", 14, scale(200), func(r *rand.Rand, g *delta.Graph, i int) event {
			if i < scale(70) {
				return addOrRemove(r, g, 14, 1)
			}
			return addOrRemove(r, g, 14, 0.25)
		}},
		repeatedPairs(scale(160)),
		hub("hub", 16, scale(160), 0.5),
		rebuild(scale(60)),
	}
	if kind == delta.Directed {
		s = append(s,
			hub("hub paying out", 16, scale(160), 0.9),
			hub("hub paid in", 16, scale(160), 0.1),
			reciprocalPairs(scale(160)),
			oneDirectionRemoves(scale(160)),
		)
	}
	return s
}

// repeatedPairs draws every event from a pool of 10 pairs, so pairs reach
// multiplicities above 1 and only some events change the simple graph.
func repeatedPairs(events int) stream {
	var pool [][2]uint32
	return stream{"repeated pairs", 10, events, func(r *rand.Rand, g *delta.Graph, i int) event {
		if i == 0 {
			pool = pool[:0]
			for len(pool) < 10 {
				u, v := pair(r, 10)
				pool = append(pool, [2]uint32{u, v})
			}
		}
		p := pool[r.IntN(len(pool))]
		if r.Float64() < 0.55 || g.Multiplicity(p[0], p[1]) == 0 {
			return event{true, p[0], p[1], false}
		}
		return event{false, p[0], p[1], false}
	}}
}

// hub sends 60% of events through node 0; for directed kinds pOut is the
// share of the hub's arcs that leave it (it is ignored for undirected).
func hub(name string, n, events int, pOut float64) stream {
	return stream{name, n, events, func(r *rand.Rand, g *delta.Graph, _ int) event {
		if r.Float64() >= 0.6 {
			return addOrRemove(r, g, n, 0.7)
		}
		x := uint32(1 + r.IntN(n-1))
		u, v := uint32(0), x
		if r.Float64() >= pOut {
			u, v = x, 0
		}
		if r.Float64() < 0.7 || g.Multiplicity(u, v) == 0 {
			return event{true, u, v, false}
		}
		return event{false, u, v, false}
	}}
}

// rebuild adds build events (with repeats), removes every edge down to
// multiplicity zero, then builds again.
func rebuild(build int) stream {
	emptied := false
	return stream{"delete everything then rebuild", 12, 3 * build, func(r *rand.Rand, g *delta.Graph, i int) event {
		if i == 0 {
			emptied = false
		}
		if i < build || emptied {
			return addOrRemove(r, g, 12, 1)
		}
		u, v, ok := existing(r, g)
		if !ok || (g.NumEdges() == 1 && g.Multiplicity(u, v) == 1) {
			emptied = true
		}
		if !ok {
			return addOrRemove(r, g, 12, 1)
		}
		return event{false, u, v, false}
	}}
}

// reciprocalPairs mostly answers an existing arc u→v with v→u, and removes
// one side of reciprocal pairs.
func reciprocalPairs(events int) stream {
	return stream{"reciprocal pairs", 12, events, func(r *rand.Rand, g *delta.Graph, _ int) event {
		u, v, ok := existing(r, g)
		switch p := r.Float64(); {
		case ok && p < 0.5:
			return event{true, v, u, false}
		case ok && p < 0.8:
			return event{false, u, v, false}
		}
		a, b := pair(r, 12)
		return event{true, a, b, false}
	}}
}

// oneDirectionRemoves builds reciprocal pairs and then removes and
// restores single directions of them.
func oneDirectionRemoves(events int) stream {
	return stream{"one-direction removes", 12, events, func(r *rand.Rand, g *delta.Graph, i int) event {
		if i < events/3 {
			if u, v, ok := existing(r, g); ok && i%2 == 1 {
				return event{true, v, u, false}
			}
			a, b := pair(r, 12)
			return event{true, a, b, false}
		}
		u, v, ok := existing(r, g)
		if ok && g.HasEdge(v, u) && r.Float64() < 0.6 {
			return event{false, u, v, false}
		}
		if ok && r.Float64() < 0.5 {
			return event{true, v, u, false}
		}
		return addOrRemove(r, g, 12, 0.6)
	}}
}

// rejected returns an event the graph must refuse: a self-loop add or
// remove, or a remove of a pair (arc) whose multiplicity is zero.
func rejected(r *rand.Rand, g *delta.Graph, n int) event {
	if g.Kind() == delta.Signed {
		return rejectedSigned(r, g, n)
	}
	if r.IntN(3) != 0 {
		for try := 0; try < 100; try++ {
			if u, v := pair(r, n); g.Multiplicity(u, v) == 0 {
				return event{false, u, v, false}
			}
		}
	}
	x := uint32(r.IntN(n))
	return event{r.IntN(2) == 0, x, x, false}
}
