package five

import (
	"fmt"
	"testing"

	"orbitwatch/delta"
	"orbitwatch/delta/brute"
	"orbitwatch/delta/catalog"
)

// small is a graph on k ≤ 7 nodes as a bitmask over pairs (PairBit).
type small struct {
	k    int
	code uint32
}

func pairBit(i, j int) uint32 {
	a, b := min(i, j), max(i, j)
	return 1 << uint(b*(b-1)/2+a)
}

func (s small) adjacent(i, j int) bool { return s.code&pairBit(i, j) != 0 }

func (s small) degrees() []int {
	d := make([]int, s.k)
	for i := range s.k {
		for j := range s.k {
			if i != j && s.adjacent(i, j) {
				d[i]++
			}
		}
	}
	return d
}

// canonical returns the least code over the relabellings that list the
// nodes by ascending degree: an isomorphism invariant, since the set of
// such relabellings is defined by the graph alone.
func (s small) canonical() uint32 {
	deg := s.degrees()
	best := ^uint32(0)
	perm := make([]int, s.k) // perm[old] = new
	used := make([]bool, s.k)
	order := make([]int, 0, s.k) // order[new] = old
	var rec func()
	rec = func() {
		pos := len(order)
		if pos == s.k {
			var c uint32
			for i := range s.k {
				for j := i + 1; j < s.k; j++ {
					if s.adjacent(i, j) {
						c |= pairBit(perm[i], perm[j])
					}
				}
			}
			best = min(best, c)
			return
		}
		// The next position takes a node of the least unused degree.
		least := 1 << 30
		for v := range s.k {
			if !used[v] {
				least = min(least, deg[v])
			}
		}
		for v := range s.k {
			if used[v] || deg[v] != least {
				continue
			}
			used[v], perm[v] = true, pos
			order = append(order, v)
			rec()
			order = order[:pos]
			used[v] = false
		}
	}
	rec()
	return best
}

// connectedGraphs returns one representative of every connected graph on
// k nodes, for k = 1..max: each is a connected graph on k−1 nodes plus a
// node joined to a non-empty subset (every connected graph has a node
// whose removal leaves it connected), kept once per canonical code.
func connectedGraphs(maxK int) [][]small {
	out := make([][]small, maxK+1)
	out[1] = []small{{k: 1}}
	for k := 2; k <= maxK; k++ {
		seen := map[uint32]bool{}
		for _, g := range out[k-1] {
			for sub := uint32(1); sub < 1<<(k-1); sub++ {
				h := small{k: k, code: g.code}
				for i := range k - 1 {
					if sub>>i&1 != 0 {
						h.code |= pairBit(i, k-1)
					}
				}
				if cc := h.canonical(); !seen[cc] {
					seen[cc] = true
					out[k] = append(out[k], small{k: k, code: cc})
				}
			}
		}
	}
	return out
}

func (s small) graph() *delta.Graph {
	g := delta.NewGraph(delta.Undirected)
	g.Grow(s.k)
	for i := range s.k {
		for j := i + 1; j < s.k; j++ {
			if s.adjacent(i, j) {
				g.Increment(uint32(i), uint32(j))
			}
		}
	}
	return g
}

// TestEveryConnectedGraph holds the recount to delta/brute, node by node
// and orbit by orbit, on every connected graph on up to 7 nodes: the
// orbit equations, the tree formulas and the cycle listing meet every
// overlap a 5-node set can have inside a 7-node graph. The number of
// graphs per size is checked against OEIS A001349 (connected graphs: 1,
// 1, 2, 6, 21, 112, 853 on 1–7 nodes; recalled from memory, and the
// first five agree with the catalog's own enumeration).
func TestEveryConnectedGraph(t *testing.T) {
	cat, _ := catalog.New(delta.Undirected, 5)
	all := connectedGraphs(7)
	want := []int{0, 1, 1, 2, 6, 21, 112, 853}
	for k := 1; k <= 7; k++ {
		if len(all[k]) != want[k] {
			t.Fatalf("%d connected graphs on %d nodes, OEIS A001349 says %d", len(all[k]), k, want[k])
		}
	}
	r := NewRecounter(Options{Workers: 1})
	checked := 0
	for k := 2; k <= 7; k++ {
		for _, s := range all[k] {
			g := s.graph()
			if err := sameAsBrute(r, g, cat, loadEquations()); err != nil {
				t.Fatalf("graph on %d nodes, code %#x: %v", k, s.code, err)
			}
			checked++
		}
	}
	t.Logf("%d connected graphs on 2–7 nodes agree with brute force", checked)
}

func sameAsBrute(r *Recounter, g *delta.Graph, cat *catalog.Catalog, eq *equations) error {
	got, err := r.count(g, eq)
	if err != nil {
		return err
	}
	want := brute.Count(g, cat)
	if x, o, a, b, ok := got.FirstDiff(want); !ok {
		return fmt.Errorf("node %d orbit %d (%s): recount %d, brute %d", x, o, cat.Orbits[o].Name, a, b)
	}
	return nil
}

// TestWrongEquationsFail shows the check above can fail: a recount with
// one overlap coefficient or one multiplicity off disagrees with brute
// force on some connected graph of up to 7 nodes.
func TestWrongEquationsFail(t *testing.T) {
	cat, _ := catalog.New(delta.Undirected, 5)
	all := connectedGraphs(7)
	right := loadEquations()
	breakers := map[string]func(e *equations){
		"overlap[5-path end][K5] + 1": func(e *equations) { e.overlap[right.treeOrbit[pathEnd]][72]++ },
		"overlap[chair leaf][any] + 1": func(e *equations) {
			for o := first5; o < numOrbits; o++ {
				if e.overlap[right.treeOrbit[chairLeaf]][o] != 0 && o != right.treeOrbit[chairLeaf] {
					e.overlap[right.treeOrbit[chairLeaf]][o]++
					return
				}
			}
		},
		"multiplicity of the 5-cycle doubled": func(e *equations) { e.mult[34] *= 2 },
	}
	for name, breakIt := range breakers {
		wrong := *right
		wrong.overlap = make([][]int64, len(right.overlap))
		for i := range right.overlap {
			wrong.overlap[i] = append([]int64(nil), right.overlap[i]...)
		}
		breakIt(&wrong)
		caught := false
		func() {
			// A wrong multiplicity may panic on an inexact division;
			// that is caught too.
			defer func() {
				if recover() != nil {
					caught = true
				}
			}()
			for k := 5; k <= 7 && !caught; k++ {
				for _, s := range all[k] {
					if sameAsBrute(NewRecounter(Options{Workers: 1}), s.graph(), cat, &wrong) != nil {
						caught = true
						break
					}
				}
			}
		}()
		if !caught {
			t.Errorf("%s: no graph on up to 7 nodes tells it from brute force", name)
		}
	}
}
