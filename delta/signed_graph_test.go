package delta

import (
	"errors"
	"math/rand/v2"
	"testing"
)

// TestSignedMultiplicities walks one pair through the signed semantics:
// an edge while either multiplicity is above zero, negative while the
// negative one is, a remove of a sign at zero rejected even while the
// other sign keeps the edge.
func TestSignedMultiplicities(t *testing.T) {
	g := NewGraph(Signed)
	steps := []struct {
		add, neg bool
		changed  bool
		err      error
		p, n     uint32
		links    Link
	}{
		{true, false, true, nil, 1, 0, LinkOut | LinkIn},
		{true, false, false, nil, 2, 0, LinkOut | LinkIn},
		{true, true, true, nil, 2, 1, LinkOut | LinkIn | LinkNeg},  // one dispute marks the pair
		{true, true, false, nil, 2, 2, LinkOut | LinkIn | LinkNeg}, // a second changes nothing visible
		{false, false, false, nil, 1, 2, LinkOut | LinkIn | LinkNeg},
		{false, true, false, nil, 1, 1, LinkOut | LinkIn | LinkNeg},
		{false, true, true, nil, 1, 0, LinkOut | LinkIn}, // the last dispute goes: positive again
		{false, true, false, ErrAbsent, 1, 0, LinkOut | LinkIn},
		{false, false, true, nil, 0, 0, 0},
		{false, false, false, ErrAbsent, 0, 0, 0},
		{true, true, true, nil, 0, 1, LinkOut | LinkIn | LinkNeg},
		{false, false, false, ErrAbsent, 0, 1, LinkOut | LinkIn | LinkNeg}, // no positive unit to remove
		{false, true, true, nil, 0, 0, 0},
	}
	for i, s := range steps {
		var changed bool
		var err error
		if s.add {
			changed, err = g.IncrementSigned(3, 1, s.neg)
		} else {
			changed, err = g.DecrementSigned(1, 3, s.neg)
		}
		if changed != s.changed || !errors.Is(err, s.err) {
			t.Fatalf("step %d: changed %v err %v, want %v %v", i, changed, err, s.changed, s.err)
		}
		if p, n := g.Multiplicities(1, 3); p != s.p || n != s.n {
			t.Fatalf("step %d: multiplicities %d, %d, want %d, %d", i, p, n, s.p, s.n)
		}
		if l, r := g.Links(1, 3), g.Links(3, 1); l != s.links || r != s.links {
			t.Fatalf("step %d: links %b / %b, want %b", i, l, r, s.links)
		}
		if want := s.links&LinkNeg != 0; g.Neg(1).Contains(3) != want || g.Neg(3).Contains(1) != want {
			t.Fatalf("step %d: negative neighbour bitmaps disagree with the sign", i)
		}
		if g.Multiplicity(1, 3) != s.p+s.n || g.HasEdge(3, 1) != (s.links != 0) || g.NumEdges() != int(min(1, s.p+s.n)) {
			t.Fatalf("step %d: multiplicity %d, edge %v, %d edges", i, g.Multiplicity(1, 3), g.HasEdge(3, 1), g.NumEdges())
		}
	}
	if _, err := g.IncrementSigned(2, 2, true); !errors.Is(err, ErrSelfLoop) {
		t.Fatalf("signed self-loop: %v", err)
	}
	g.SetMultiplicities(0, 1, ^uint32(0)-1, 1)
	if _, err := g.IncrementSigned(0, 1, false); !errors.Is(err, ErrMultiplicity) {
		t.Fatalf("p + n past 2^32−1: %v", err)
	}
	if len(g.extra) != 0 || len(g.pos) != 1 {
		t.Fatalf("side maps hold %d, %d entries, want 0, 1", len(g.extra), len(g.pos))
	}
}

// TestSignedGraphModel replays random signed events on a Graph and on a
// plain map of multiplicities and demands the same pairs, signs, edge
// counts and side-map sizes throughout, and that a clone is independent.
func TestSignedGraphModel(t *testing.T) {
	r := rand.New(rand.NewPCG(7, 12))
	g := NewGraph(Signed)
	model := map[[2]uint32][2]uint32{}
	for i := 0; i < 20000; i++ {
		u, v := uint32(r.IntN(9)), uint32(r.IntN(9))
		neg, add := r.IntN(3) == 0, r.IntN(2) == 0
		k := [2]uint32{min(u, v), max(u, v)}
		m := model[k]
		s := 0
		if neg {
			s = 1
		}
		var err error
		if add {
			_, err = g.IncrementSigned(u, v, neg)
		} else {
			_, err = g.DecrementSigned(u, v, neg)
		}
		switch {
		case u == v:
			if !errors.Is(err, ErrSelfLoop) {
				t.Fatalf("event %d: self-loop gave %v", i, err)
			}
		case !add && m[s] == 0:
			if !errors.Is(err, ErrAbsent) {
				t.Fatalf("event %d: remove at zero gave %v", i, err)
			}
		case err != nil:
			t.Fatalf("event %d: %v", i, err)
		case add:
			m[s]++
		default:
			m[s]--
		}
		model[k] = m
	}
	check := func(g *Graph) {
		edges, extra, pos := 0, 0, 0
		for k, m := range model {
			if k[0] == k[1] {
				continue
			}
			p, n := g.Multiplicities(k[1], k[0])
			if p != m[0] || n != m[1] {
				t.Fatalf("pair %v: multiplicities %d, %d, model %v", k, p, n, m)
			}
			want := Link(0)
			if m[0]+m[1] > 0 {
				want = LinkOut | LinkIn
				edges++
			}
			if m[1] > 0 {
				want |= LinkNeg
			}
			if g.Links(k[0], k[1]) != want {
				t.Fatalf("pair %v: links %b, want %b", k, g.Links(k[0], k[1]), want)
			}
			own := m[0]
			if m[1] > 0 {
				own = m[1]
			}
			if own > 1 {
				extra++
			}
			if m[1] > 0 && m[0] > 0 {
				pos++
			}
		}
		if g.NumEdges() != edges || len(g.extra) != extra || len(g.pos) != pos {
			t.Fatalf("%d edges, %d/%d side entries; model %d edges, %d/%d", g.NumEdges(), len(g.extra), len(g.pos), edges, extra, pos)
		}
	}
	check(g)
	c := g.Clone()
	check(c)
	for k := range model {
		if k[0] != k[1] {
			g.SetMultiplicities(k[0], k[1], 0, 0)
		}
	}
	check(c)
	if g.NumEdges() != 0 || len(g.extra) != 0 || len(g.pos) != 0 {
		t.Fatalf("cleared graph keeps %d edges, %d/%d side entries", g.NumEdges(), len(g.extra), len(g.pos))
	}
}

// TestApplySigned holds the counter calls of ApplySigned to the Counter
// contract: Insert while the graph lacks the edge, with the new sign;
// Delete while it has it; a flip as Delete then Insert; nothing for a
// change that leaves the signed simple graph as it was.
func TestApplySigned(t *testing.T) {
	g := NewGraph(Signed)
	rec := &callRecorder{g: g}
	steps := []struct {
		add, neg bool
		calls    string
	}{
		{true, false, "+"},
		{true, false, ""},
		{true, true, "d-"},  // flip to negative
		{false, false, ""},  // a positive unit goes, the dispute stays
		{true, false, ""},   // positive again under the dispute
		{false, true, "d+"}, // the dispute goes: positive
		{false, false, ""},
		{false, false, "d"},
		{true, true, "-"},
		{false, true, "d"},
	}
	for i, s := range steps {
		rec.calls = ""
		if _, err := ApplySigned(g, rec, 0, 1, s.neg, s.add); err != nil {
			t.Fatalf("step %d: %v", i, err)
		}
		if rec.calls != s.calls {
			t.Fatalf("step %d: counter calls %q, want %q", i, rec.calls, s.calls)
		}
	}
	if _, err := ApplySigned(g, rec, 0, 1, true, false); !errors.Is(err, ErrAbsent) || rec.calls != "d" {
		t.Fatalf("rejected remove: %v, calls %q", err, rec.calls)
	}
}

// callRecorder is a Counter that records Insert ("+", "-") and Delete
// ("d") and checks the graph each sees.
type callRecorder struct {
	Counter
	g     *Graph
	calls string
}

func (c *callRecorder) Insert(g *Graph, u, v uint32, neg bool) error {
	if g.HasEdge(u, v) {
		panic("Insert with the edge present")
	}
	if neg {
		c.calls += "-"
	} else {
		c.calls += "+"
	}
	return nil
}

func (c *callRecorder) Delete(g *Graph, u, v uint32) error {
	if !g.HasEdge(u, v) || g.Multiplicity(u, v) != 1 {
		panic("Delete with the edge absent or multiple")
	}
	c.calls += "d"
	return nil
}
