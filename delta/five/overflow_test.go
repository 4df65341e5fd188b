package five

import (
	"errors"
	"sync/atomic"
	"testing"

	"orbitwatch/delta"
)

// star returns a star with the given number of leaves around node 0.
func star(leaves int) *delta.Graph {
	g := delta.NewGraph(delta.Undirected)
	g.Grow(leaves + 1)
	for x := 1; x <= leaves; x++ {
		g.Increment(0, uint32(x))
	}
	return g
}

// TestMillionDegreeOverflows: a node of degree one million is the centre
// of C(10^6, 4) ≈ 4.2·10^22 4-stars, more than a uint64 holds. The
// recount returns ErrOverflow (no panic, no wrapped count), and so do the
// Counter's Vector and, after it, Insert.
func TestMillionDegreeOverflows(t *testing.T) {
	if testing.Short() {
		t.Skip("builds a graph with a million edges")
	}
	g := star(1_000_000)
	if _, err := NewRecounter(Options{}).Count(g); !errors.Is(err, ErrOverflow) {
		t.Fatalf("recount of a million-leaf star: error %v, want ErrOverflow", err)
	}
	c := NewCounter(Options{})
	if err := c.Restore(g, emptySource{}); err != nil {
		t.Fatal(err)
	}
	if err := c.Insert(g, 1, 2, false); err != nil {
		t.Fatal(err)
	}
	if _, err := c.Vector(0, nil); !errors.Is(err, ErrOverflow) {
		t.Fatalf("Vector after a million-leaf star: error %v, want ErrOverflow", err)
	}
	if err := c.Insert(g, 3, 4, false); !errors.Is(err, ErrOverflow) {
		t.Fatalf("Insert after an overflow: error %v, want ErrOverflow", err)
	}
}

// TestLargestStarFits: just below the limit the star counts are exact:
// C(d, 4) ≈ 4.2·10^18 for the centre (within 2^63), C(d−1, 3) for a
// leaf, with d = 100 000, the expected values computed here in uint64 as
// d(d−1)(d−2)/6·(d−3)/4, a route separate from the recount's 128-bit
// steps.
func TestLargestStarFits(t *testing.T) {
	if testing.Short() {
		t.Skip("builds a graph with 100 000 edges")
	}
	const d = 100_000
	v, err := NewRecounter(Options{}).Count(star(d))
	if err != nil {
		t.Fatal(err)
	}
	centre := uint64(d) * (d - 1) * (d - 2) / 6 * (d - 3) / 4
	leaf := uint64(d-1) * (d - 2) * (d - 3) / 6
	eq := loadEquations()
	if got := v.Get(0, eq.treeOrbit[starCentre]); got != centre {
		t.Errorf("centre of a %d-leaf star: %d 4-stars, want %d", d, got, centre)
	}
	if got := v.Get(7, eq.treeOrbit[starLeaf]); got != leaf {
		t.Errorf("leaf of a %d-leaf star: %d 4-stars, want %d", d, got, leaf)
	}
}

// TestProgress: the callback sees every unit of work once, with the
// total it announced.
func TestProgress(t *testing.T) {
	g := star(1000)
	var done, total atomic.Int64
	r := NewRecounter(Options{Progress: func(d, tot int64) {
		done.Add(d)
		total.Store(tot)
	}})
	if _, err := r.Count(g); err != nil {
		t.Fatal(err)
	}
	if done.Load() != total.Load() || total.Load() != 4*int64(g.NumNodes()) {
		t.Errorf("progress reached %d of %d, want %d of %d", done.Load(), total.Load(), 4*g.NumNodes(), 4*g.NumNodes())
	}
}

type emptySource struct{}

func (emptySource) Record(uint32) ([]byte, error)                     { return nil, nil }
func (emptySource) Adjacent(uint32, []delta.Adj) ([]delta.Adj, error) { return nil, nil }
func (emptySource) Linked(uint32, uint32) (delta.Link, error)         { return 0, nil }
