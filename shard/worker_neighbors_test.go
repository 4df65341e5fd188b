package shard

import (
	"context"
	"encoding/json"
	"fmt"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"
	"time"

	"orbitwatch/delta"
	"orbitwatch/storage"
	"orbitwatch/stream"
)

// plainGraph is the reference adjacency of a log, kept by counting adds
// and removes per pair and sign (or per arc) in maps: no bitmaps, no
// delta.Graph.
type plainGraph struct {
	kind  delta.Kind
	count map[[3]string]int // {a, b, sign} → multiplicity; a < b unless directed
}

func plainKey(kind delta.Kind, src, dst string, neg bool) [3]string {
	sign := "+"
	if neg {
		sign = "-"
	}
	if kind != delta.Directed && dst < src {
		src, dst = dst, src
	}
	return [3]string{src, dst, sign}
}

// link says how y is joined to x, seen from x, as a Tie says it ("" when
// not at all).
func (p *plainGraph) link(x, y string) (dir, sign string, ok bool) {
	switch p.kind {
	case delta.Directed:
		out, in := p.count[[3]string{x, y, "+"}] > 0, p.count[[3]string{y, x, "+"}] > 0
		switch {
		case out && in:
			return "both", "", true
		case out:
			return "out", "", true
		case in:
			return "in", "", true
		}
		return "", "", false
	case delta.Signed:
		pos, neg := p.count[plainKey(p.kind, x, y, false)] > 0, p.count[plainKey(p.kind, x, y, true)] > 0
		switch {
		case neg:
			return "", "-", true
		case pos:
			return "", "+", true
		}
		return "", "", false
	}
	return "", "", p.count[plainKey(p.kind, x, y, false)] > 0
}

func (p *plainGraph) neighbours(x string, names []string) []string {
	var out []string
	for _, y := range names {
		if _, _, ok := p.link(x, y); ok && y != x {
			out = append(out, y)
		}
	}
	return out
}

// hoodLog is a seeded log over n accounts, two of them hubs, with
// removes of present pairs (of the sign present, for the signed kind).
func hoodLog(kind delta.Kind, n, events int, seed uint64) ([]stream.Event, *plainGraph) {
	r := rand.New(rand.NewPCG(seed, 11))
	p := &plainGraph{kind: kind, count: map[[3]string]int{}}
	var log []stream.Event
	var live [][3]string
	for len(log) < events {
		ts := t0.Add(time.Duration(len(log)) * time.Minute)
		if len(live) > 0 && r.IntN(4) == 0 {
			i := r.IntN(len(live))
			k := live[i]
			live = slices.Delete(live, i, i+1)
			p.count[k]--
			log = append(log, stream.Event{Op: stream.OpRemove, Src: k[0], Dst: k[1], Neg: k[2] == "-", TS: ts, HasTS: true})
			continue
		}
		a := fmt.Sprintf("n%02d", r.IntN(n))
		b := fmt.Sprintf("n%02d", r.IntN(n))
		if r.IntN(3) == 0 {
			b = fmt.Sprintf("hub%d", r.IntN(2))
		}
		if a == b {
			continue
		}
		neg := kind == delta.Signed && r.IntN(5) == 0
		k := plainKey(kind, a, b, neg)
		p.count[k]++
		live = append(live, k)
		log = append(log, stream.Event{Op: stream.OpAdd, Src: a, Dst: b, Neg: neg, TS: ts, HasTS: true})
	}
	return log, p
}

// checkHood holds a neighbourhood drawing against the reference graph:
// the node first, its busiest neighbours next (degree, then number),
// second-hop nodes two steps away and each reached from a drawn
// neighbour, every tie among drawn nodes that the drawing promises
// (centre–first, first–first, first–second) present once with its
// direction or sign and no other, degrees and hidden counts exact, and
// the compatible Neighbors and Edges fields agreeing.
func checkHood(t *testing.T, a *Applier, p *plainGraph, q NeighborQuery, nb Neighbors) {
	t.Helper()
	names := a.Names()
	num := func(s string) uint32 { x, _ := a.Lookup(s); return x }
	deg := func(s string) int { return len(p.neighbours(s, names)) }
	x := q.Node
	if !nb.Found || nb.Nodes[0].ID != x || nb.Nodes[0].Hop != 0 || nb.Degree != deg(x) {
		t.Fatalf("%s: found %v, first node %+v, degree %d (want %d)", x, nb.Found, nb.Nodes[0], nb.Degree, deg(x))
	}
	want := p.neighbours(x, names)
	slices.SortStableFunc(want, func(u, v string) int {
		if du, dv := deg(u), deg(v); du != dv {
			return dv - du
		}
		return int(num(u)) - int(num(v))
	})
	want = want[:min(len(want), q.Limit)]
	if !slices.Equal(nb.Neighbors, want) {
		t.Fatalf("%s: first hop %v, want %v", x, nb.Neighbors, want)
	}
	hop := map[string]int{}
	for i, n := range nb.Nodes {
		if _, dup := hop[n.ID]; dup {
			t.Fatalf("%s: %s drawn twice", x, n.ID)
		}
		hop[n.ID] = n.Hop
		if n.Degree != deg(n.ID) {
			t.Fatalf("%s: %s has degree %d, want %d", x, n.ID, n.Degree, deg(n.ID))
		}
		if i >= 1 && i <= len(want) && (n.Hop != 1 || n.ID != want[i-1]) {
			t.Fatalf("%s: node %d is %+v, want the neighbour %s", x, i, n, want[i-1])
		}
		if i > len(want) {
			_, _, nearCentre := p.link(x, n.ID)
			reached := slices.ContainsFunc(want, func(y string) bool { _, _, ok := p.link(y, n.ID); return ok })
			if n.Hop != 2 || nearCentre || !reached {
				t.Fatalf("%s: %+v is no second-hop node of the drawing", x, n)
			}
			if _, _, ok := p.link(nb.Nodes[n.Via].ID, n.ID); n.Via < 1 || n.Via > len(want) || !ok {
				t.Fatalf("%s: %+v is drawn via %d, not a neighbour joined to it", x, n, n.Via)
			}
		}
	}
	if far := len(nb.Nodes) - 1 - len(want); far > min(q.Far*len(want), MaxFarNodes) {
		t.Fatalf("%s: %d second-hop nodes drawn, at most %d per neighbour", x, far, q.Far)
	}
	// Ties: exactly the promised ones, each once.
	drawn := map[[2]string]Tie{}
	ties := make([]int, len(nb.Nodes))
	for _, tie := range nb.Ties {
		u, v := nb.Nodes[tie.A].ID, nb.Nodes[tie.B].ID
		dir, sign, ok := p.link(u, v)
		if !ok || tie.Dir != dir || tie.Sign != sign {
			t.Fatalf("%s: tie %s–%s %+v, the graph has (%q, %q, %v)", x, u, v, tie, dir, sign, ok)
		}
		k := [2]string{min(u, v), max(u, v)}
		if _, dup := drawn[k]; dup {
			t.Fatalf("%s: tie %s–%s twice", x, u, v)
		}
		drawn[k] = tie
		ties[tie.A]++
		ties[tie.B]++
	}
	for i, u := range nb.Nodes {
		for _, v := range nb.Nodes[i+1:] {
			_, _, adjacent := p.link(u.ID, v.ID)
			promised := adjacent && (u.Hop+v.Hop <= 2 || u.Hop+v.Hop == 3)
			if _, ok := drawn[[2]string{min(u.ID, v.ID), max(u.ID, v.ID)}]; ok != promised {
				t.Fatalf("%s: tie %s (hop %d)–%s (hop %d) drawn %v, want %v", x, u.ID, u.Hop, v.ID, v.Hop, ok, promised)
			}
		}
		if u.Hidden != u.Degree-ties[i] {
			t.Fatalf("%s: %s hides %d ties, want %d − %d", x, u.ID, u.Hidden, u.Degree, ties[i])
		}
	}
	edges := 0
	for i := range want {
		for j := i + 1; j < len(want); j++ {
			if _, _, ok := p.link(want[i], want[j]); ok {
				if !slices.Contains(nb.Edges, [2]int{i, j}) {
					t.Fatalf("%s: edge %d–%d missing from Edges", x, i, j)
				}
				edges++
			}
		}
	}
	if edges != len(nb.Edges) {
		t.Fatalf("%s: %d Edges, want %d", x, len(nb.Edges), edges)
	}
}

// TestNeighborhoodTwoHops draws every node's two-hop neighbourhood in
// each kind, now and as of every cut, holds each against a plain
// reference adjacency, and holds the as-of drawing (from the stored
// adjacency) equal to the drawing now taken at the same state (from the
// in-memory graph).
func TestNeighborhoodTwoHops(t *testing.T) {
	ctx := context.Background()
	for _, kind := range []delta.Kind{delta.Undirected, delta.Directed, delta.Signed} {
		c := mustCounting(t, kind, 3)
		st, err := storage.Open(t.TempDir(), storage.Settings{Kind: kind, MaxNodes: 3, NumOrbits: c.Catalog.NumOrbits()})
		if err != nil {
			t.Fatal(err)
		}
		defer st.Close()
		log, _ := hoodLog(kind, 30, 400, 5)
		a := NewApplier(c, 0, Cuts{})
		a.OnCut = func(cp *storage.Checkpoint) error { return st.Commit(cp) }
		// The reference follows the log to each cut.
		ref := &plainGraph{kind: kind, count: map[[3]string]int{}}
		queries := []NeighborQuery{{Limit: 24, Far: 3}, {Limit: 3, Far: 0}, {Limit: 5, Far: 20}, {Limit: 200, Far: 2}}
		tested, far := 0, 0
		for i, e := range log {
			if err := a.Apply(uint64(i+1), e); err != nil {
				t.Fatalf("%s seq %d: %v", kind, i+1, err)
			}
			d := 1
			if e.Op == stream.OpRemove {
				d = -1
			}
			ref.count[plainKey(kind, e.Src, e.Dst, e.Neg)] += d
			if (i+1)%100 != 0 {
				continue
			}
			if err := a.Cut(); err != nil {
				t.Fatal(err)
			}
			for _, name := range a.Names() {
				for _, q := range queries {
					q.Node = name
					now := NeighborhoodNow(ctx, a, q)
					checkHood(t, a, ref, q, now)
					q.Seq = a.Seq()
					then := NeighborhoodStored(ctx, st, q)
					jn, _ := json.Marshal(now)
					jt, _ := json.Marshal(then)
					if string(jn) != string(jt) {
						t.Fatalf("%s %s as of %d:\nstored %s\nnow    %s", kind, name, a.Seq(), jt, jn)
					}
					tested++
					for _, n := range now.Nodes {
						if n.Hop == 2 {
							far++
						}
					}
				}
			}
		}
		if tested == 0 || far == 0 {
			t.Fatalf("%s: %d drawings, %d second-hop nodes: the check is empty", kind, tested, far)
		}
	}
}

// TestNeighborhoodErrors: an unknown node, a time before the first cut
// and a node that did not exist yet at a cut are answered with 404 and a
// reason.
func TestNeighborhoodErrors(t *testing.T) {
	ctx := context.Background()
	c := mustCounting(t, delta.Undirected, 3)
	st, err := storage.Open(t.TempDir(), storage.Settings{Kind: delta.Undirected, MaxNodes: 3, NumOrbits: c.Catalog.NumOrbits()})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	a := NewApplier(c, 0, Cuts{})
	a.OnCut = func(cp *storage.Checkpoint) error { return st.Commit(cp) }
	for i, e := range []stream.Event{ev(stream.OpAdd, "a", "b", 0), ev(stream.OpAdd, "b", "c", time.Hour)} {
		if err := a.Apply(uint64(i+1), e); err != nil {
			t.Fatal(err)
		}
		if err := a.Cut(); err != nil {
			t.Fatal(err)
		}
	}
	for _, c := range []struct {
		nb   Neighbors
		want string
	}{
		{NeighborhoodNow(ctx, a, NeighborQuery{Node: "z", Limit: 5}), `unknown node "z"`},
		{NeighborhoodStored(ctx, st, NeighborQuery{Node: "a", Limit: 5, At: t0.Add(-time.Hour)}), "no complete cut"},
		{NeighborhoodStored(ctx, st, NeighborQuery{Node: "c", Limit: 5, Seq: 1}), `unknown node "c" at cut 1`},
	} {
		if c.nb.Found || c.nb.Status != 404 || c.nb.Error == "" || !strings.Contains(c.nb.Error, c.want) {
			t.Errorf("%+v: want 404 mentioning %s", c.nb, c.want)
		}
	}
	if nb := NeighborhoodStored(ctx, st, NeighborQuery{Node: "c", Limit: 5, At: t0.Add(2 * time.Hour)}); !nb.Found || nb.Seq != 2 || len(nb.Neighbors) != 1 {
		t.Errorf("c as of a time after the last cut: %+v", nb)
	}
}

// BenchmarkNeighborhood reads a two-hop drawing (16 neighbours, 3 each
// beyond) around a merchant with 5000 customers, each paying 3 other
// merchants of 50: now from the in-memory graph and as of the cut from
// the store (every degree a key scan there).
func BenchmarkNeighborhood(b *testing.B) {
	c, err := NewCounting(delta.Undirected, 3)
	if err != nil {
		b.Fatal(err)
	}
	st, err := storage.Open(b.TempDir(), storage.Settings{Kind: delta.Undirected, MaxNodes: 3, NumOrbits: c.Catalog.NumOrbits()})
	if err != nil {
		b.Fatal(err)
	}
	defer st.Close()
	a := NewApplier(c, 0, Cuts{})
	a.OnCut = func(cp *storage.Checkpoint) error { return st.Commit(cp) }
	r := rand.New(rand.NewPCG(3, 3))
	seq := uint64(0)
	for i := range 5000 {
		cust := fmt.Sprintf("cust-%05d", i)
		for k, m := range []string{"merchant-big", fmt.Sprintf("m-%02d", r.IntN(50)), fmt.Sprintf("m-%02d", r.IntN(50)), fmt.Sprintf("m-%02d", r.IntN(50))} {
			seq++
			if err := a.Apply(seq, stream.Event{Op: stream.OpAdd, Src: cust, Dst: m, TS: t0.Add(time.Duration(seq) * time.Second), HasTS: true}); err != nil && k == 0 {
				b.Fatal(err)
			}
		}
	}
	if err := a.Cut(); err != nil {
		b.Fatal(err)
	}
	ctx := context.Background()
	for _, node := range []string{"merchant-big", "cust-00042"} {
		q := NeighborQuery{Node: node, Limit: 16, Far: 3}
		b.Run("now/"+node, func(b *testing.B) {
			for b.Loop() {
				if nb := NeighborhoodNow(ctx, a, q); !nb.Found {
					b.Fatal(nb.Error)
				}
			}
		})
		q.Seq = a.Seq()
		b.Run("stored/"+node, func(b *testing.B) {
			for b.Loop() {
				if nb := NeighborhoodStored(ctx, st, q); !nb.Found {
					b.Fatal(nb.Error)
				}
			}
		})
	}
}
