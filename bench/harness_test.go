package bench

import (
	"slices"
	"testing"

	"orbitwatch/bench/gen"
	"orbitwatch/delta"
)

// smallGraphs are the test-sized graphs of each kind.
func smallGraphs(t *testing.T, kind delta.Kind) (edges []gen.Edge, grow []gen.Event) {
	t.Helper()
	if kind == delta.Undirected {
		edges = gen.BarabasiAlbert(600, 3, 11)
		return edges, gen.Grow(edges, 0)
	}
	_, ev := gen.DirectedPayments(gen.DefaultDirected(3000), 11)
	for _, e := range ev {
		edges = append(edges, gen.Edge{U: e.U, V: e.V})
	}
	return edges, ev
}

func edgeList(g *delta.Graph) []uint64 {
	var out []uint64
	g.ForEachEdge(func(u, v, m uint32) { out = append(out, uint64(u)<<40|uint64(v)<<8|uint64(m)) })
	return out
}

// Counts are a function of the graph, so a churn stream that leaves the
// graph as it found it must sum to zero change on every (node, orbit).
func TestChurnSumsToZero(t *testing.T) {
	for _, kind := range []delta.Kind{delta.Undirected, delta.Directed} {
		edges, _ := smallGraphs(t, kind)
		for _, c := range Counters(kind) {
			t.Run(c.Name, func(t *testing.T) {
				g := BuildGraph(kind, edges)
				before := edgeList(g)
				churn := gen.Churn(SimpleEdges(g), 150, 7, 0, 3)
				e := c.Engine()
				net := NewNet(g.NumNodes(), e.NumOrbits())
				run := Replay(e, g, churn, net)
				if run.Events != 300 || run.Adds != 150 || run.Removes != 150 || run.Emits == 0 || run.AddTime+run.RemoveTime > run.Elapsed {
					t.Fatalf("run %+v: want 300 events and some changes", run)
				}
				if !net.Zero() {
					t.Fatal("churn back to the same graph left non-zero net orbit changes")
				}
				if !slices.Equal(before, edgeList(g)) {
					t.Fatal("churn did not leave the graph as it was")
				}
			})
		}
	}
}

// Replaying the grow stream from an empty graph must sum to the recount of
// the final graph; for the directed stream the repeats (multiplicity > 1)
// must change nothing.
func TestGrowEqualsRecount(t *testing.T) {
	for _, kind := range []delta.Kind{delta.Undirected, delta.Directed} {
		edges, grow := smallGraphs(t, kind)
		for _, c := range Counters(kind) {
			t.Run(c.Name, func(t *testing.T) {
				g := delta.NewGraph(kind)
				g.Grow(gen.MaxNode(edges))
				e := c.Engine()
				net := NewNet(g.NumNodes(), e.NumOrbits())
				Replay(e, g, grow, net)
				_, want := Recount(c.Recounter(), g)
				for x := 0; x < g.NumNodes(); x++ {
					for o := 0; o < e.NumOrbits(); o++ {
						if got := net.Get(uint32(x), o); got < 0 || uint64(got) != want.Get(uint32(x), o) {
							t.Fatalf("node %d orbit %d: replay %d, recount %d", x, o, got, want.Get(uint32(x), o))
						}
					}
				}
			})
		}
	}
}

func TestApplyRejects(t *testing.T) {
	g := BuildGraph(delta.Undirected, []gen.Edge{{U: 0, V: 1}})
	c := CounterFor("undirected", delta.Undirected, 4)
	e := c.Engine()
	net := NewNet(4, e.NumOrbits())
	if err := Apply(e, g, gen.Event{Op: gen.Remove, U: 2, V: 3}, net); err != delta.ErrAbsent {
		t.Errorf("remove of an absent edge: %v, want %v", err, delta.ErrAbsent)
	}
	if err := Apply(e, g, gen.Event{Op: gen.Add, U: 2, V: 2}, net); err != delta.ErrSelfLoop {
		t.Errorf("self-loop: %v, want %v", err, delta.ErrSelfLoop)
	}
	if net.Emits() != 0 || g.NumEdges() != 1 {
		t.Errorf("rejected events changed something: %d emits, %d edges", net.Emits(), g.NumEdges())
	}
}

// The triangle orbit (orbit 3, Pržulj 2007 numbering) of a node is its
// triangle count, which networkx.triangles (networkx 2.8) computes
// independently.
func TestNetworkxTrianglesAgree(t *testing.T) {
	python, err := Python()
	if err != nil {
		t.Fatal(err)
	}
	edges := gen.BarabasiAlbert(3000, 4, 5)
	sec, sum, err := NetworkxTriangles(python, edges)
	if err != nil {
		t.Fatal(err)
	}
	_, v := Recount(CounterFor("undirected", delta.Undirected, 4).Recounter(), BuildGraph(delta.Undirected, edges))
	var ours uint64
	for x := 0; x < v.NumNodes(); x++ {
		ours += v.Get(uint32(x), 3)
	}
	if ours != sum || sum == 0 {
		t.Fatalf("Σ triangle orbit: ours %d, networkx.triangles %d", ours, sum)
	}
	if sec <= 0 {
		t.Fatalf("networkx time %v", sec)
	}
}

// A star one leaf past NetworkxMaxDegree is skipped before any Python
// runs (no interpreter is named here, so running one would fail).
func TestNetworkxSkipsHubs(t *testing.T) {
	var star []gen.Edge
	for leaf := range uint32(NetworkxMaxDegree + 1) {
		star = append(star, gen.Edge{U: 0, V: leaf + 1})
	}
	r, err := TimeNetworkxTriangles("", star)
	if err != nil || !r.Skipped || r.Wall != 0 {
		t.Fatalf("star of %d leaves: %+v, %v; want skipped", len(star), r, err)
	}
	if _, err := TimeNetworkxTriangles("", star[:NetworkxMaxDegree]); err == nil {
		t.Fatal("a star at the bound was not run (running no interpreter must fail)")
	}
}
