package gdv_test

import (
	"cmp"
	"math/rand/v2"
	"slices"
	"testing"

	"orbitwatch/delta"
	"orbitwatch/delta/brute"
	"orbitwatch/delta/catalog"
	"orbitwatch/delta/gdv"
)

// byScan is every node with a vector, by the slow way: the Metric's
// Distance to each, sorted by (distance, id).
func byScan(m *gdv.Metric, vecs map[uint32][]uint64, q []uint64) []gdv.Neighbor {
	qs := m.Signature(nil, q)
	var all []gdv.Neighbor
	for x, v := range vecs {
		all = append(all, gdv.Neighbor{Node: x, Distance: m.Distance(qs, m.Signature(nil, v), nil)})
	}
	slices.SortFunc(all, func(a, b gdv.Neighbor) int {
		return cmp.Or(cmp.Compare(a.Distance, b.Distance), cmp.Compare(a.Node, b.Node))
	})
	return all
}

// firstK is the first k of all that pass filter (nil: all).
func firstK(all []gdv.Neighbor, k int, filter func(uint32) bool) []gdv.Neighbor {
	var out []gdv.Neighbor
	for _, n := range all {
		if len(out) < k && (filter == nil || filter(n.Node)) {
			out = append(out, n)
		}
	}
	return out
}

// TestNearestMatchesScan holds Nearest against byScan on 40,000 nodes
// (several chunks per goroutine), a third of them drawn from a pool of 12
// vectors so that ties straddle the k-th place, some ids never Set, with
// and without a filter, before and after vectors change in place one by
// one and by a Batch.
func TestNearestMatchesScan(t *testing.T) {
	cat, err := catalog.New(delta.Undirected, 4)
	if err != nil {
		t.Fatal(err)
	}
	m := gdv.ForCatalog(cat)
	r := rand.New(rand.NewPCG(5, 6))
	pool := make([][]uint64, 12)
	for i := range pool {
		pool[i] = make([]uint64, m.NumOrbits())
		synthetic(r, pool[i])
	}
	draw := func() []uint64 {
		if r.IntN(3) == 0 {
			return slices.Clone(pool[r.IntN(len(pool))])
		}
		v := make([]uint64, m.NumOrbits())
		synthetic(r, v)
		return v
	}
	ix := gdv.NewIndex(m)
	vecs := map[uint32][]uint64{}
	for x := range uint32(40_000) {
		if x%97 == 5 {
			continue // never Set: must never be returned
		}
		vecs[x] = draw()
		ix.Set(x, vecs[x])
	}
	check := func(stage string) {
		t.Helper()
		if ix.Len() != len(vecs) {
			t.Fatalf("%s: Len %d, want %d", stage, ix.Len(), len(vecs))
		}
		for qi := range 12 {
			q := draw()
			if qi%3 == 0 {
				q = slices.Clone(pool[qi])
			}
			odd := func(x uint32) bool { return x%2 == 1 }
			all := byScan(m, vecs, q)
			for _, k := range []int{1, 7, 300, 50_000} {
				for _, f := range []func(uint32) bool{nil, odd} {
					got, want := ix.Nearest(q, k, f), firstK(all, k, f)
					if !slices.Equal(got, want) {
						t.Fatalf("%s: query %d k=%d filter=%v: got %d neighbours, want %d; first difference at %d",
							stage, qi, k, f != nil, len(got), len(want), firstDiff(got, want))
					}
				}
			}
		}
	}
	check("loaded")
	for range 2500 {
		x := uint32(r.IntN(41_000)) // some beyond the last id: the index grows
		vecs[x] = draw()
		ix.Set(x, vecs[x])
	}
	check("after in-place changes")
	b := ix.NewBatch()
	for range 2500 {
		x := uint32(40_000 + r.IntN(2_000)) // some set twice: the last counts
		vecs[x] = draw()
		b.Set(x, vecs[x])
	}
	ix.Apply(b)
	check("after a batch")
	if got := ix.Nearest(pool[0], 0, nil); got != nil {
		t.Errorf("k=0 gave %v", got)
	}
	if got := gdv.NewIndex(m).Nearest(pool[0], 5, nil); len(got) != 0 {
		t.Errorf("empty index gave %v", got)
	}
}

func firstDiff(a, b []gdv.Neighbor) int {
	for i := range min(len(a), len(b)) {
		if a[i] != b[i] {
			return i
		}
	}
	return min(len(a), len(b))
}

// TestPlantedIsomorphicComponents: two copies of one small connected
// graph, the second with its nodes relabelled, lie beside a sparse random
// background. Counted by the brute-force enumerator, each node of the
// first copy has as its nearest signature its image in the second, at
// distance 0, and vice versa, for the 2–4 and the 2–5 node catalogs.
func TestPlantedIsomorphicComponents(t *testing.T) {
	const background, size = 300, 8
	r := rand.New(rand.NewPCG(7, 8))
	g := delta.NewGraph(delta.Undirected)
	g.Grow(background + 2*size)
	for range 2 * background {
		u, v := uint32(r.IntN(background)), uint32(r.IntN(background))
		if u != v && !g.HasEdge(u, v) {
			g.Link(u, v)
		}
	}
	// The component: a path through all nodes (so it is connected) plus
	// random chords; copy B is copy A under a random relabelling.
	var edges [][2]int
	for i := 1; i < size; i++ {
		edges = append(edges, [2]int{i - 1, i})
	}
	for range 6 {
		i, j := r.IntN(size), r.IntN(size)
		if i != j && !slices.Contains(edges, [2]int{i, j}) && !slices.Contains(edges, [2]int{j, i}) {
			edges = append(edges, [2]int{i, j})
		}
	}
	perm := r.Perm(size)
	a := func(i int) uint32 { return uint32(background + i) }
	b := func(i int) uint32 { return uint32(background + size + perm[i]) }
	for _, e := range edges {
		g.Link(a(e[0]), a(e[1]))
		g.Link(b(e[0]), b(e[1]))
	}
	for _, k := range []int{4, 5} {
		cat, err := catalog.New(delta.Undirected, k)
		if err != nil {
			t.Fatal(err)
		}
		vecs := brute.Count(g, cat)
		m := gdv.ForCatalog(cat)
		ix := gdv.NewIndex(m)
		for x := range uint32(g.NumNodes()) {
			ix.Set(x, vecs.Row(x))
		}
		for i := range size {
			for _, pair := range [][2]uint32{{a(i), b(i)}, {b(i), a(i)}} {
				x, image := pair[0], pair[1]
				// Precondition of this seed: no other node (the component
				// has no automorphism moving x, no background node matches)
				// has exactly x's vector, so the image alone is at 0.
				var same []uint32
				for y := range uint32(g.NumNodes()) {
					if y != x && slices.Equal(vecs.Row(y), vecs.Row(x)) {
						same = append(same, y)
					}
				}
				if len(same) != 1 || same[0] != image {
					t.Fatalf("k=%d: nodes sharing the vector of %d are %v, want only its image %d (choose another seed)", k, x, same, image)
				}
				got := ix.Nearest(vecs.Row(x), 2, func(y uint32) bool { return y != x })
				if len(got) != 2 || got[0] != (gdv.Neighbor{Node: image, Distance: 0}) || !(got[1].Distance > 0) {
					t.Fatalf("k=%d: nearest of %d are %v, want its image %d at distance 0, then one above 0", k, x, got, image)
				}
			}
		}
	}
}

// TestTermsMatchDistance: the per-orbit terms an Index gives for a stored
// node are the Metric's, and a node never Set reports false.
func TestTermsMatchDistance(t *testing.T) {
	cat, err := catalog.New(delta.Undirected, 5)
	if err != nil {
		t.Fatal(err)
	}
	m := gdv.ForCatalog(cat)
	r := rand.New(rand.NewPCG(9, 10))
	u, v := make([]uint64, m.NumOrbits()), make([]uint64, m.NumOrbits())
	synthetic(r, u)
	synthetic(r, v)
	ix := gdv.NewIndex(m)
	ix.Set(3, v)
	got, ok := ix.Terms(nil, u, 3)
	want := make([]float64, m.NumOrbits())
	d := m.Distance(m.Signature(nil, u), m.Signature(nil, v), want)
	if !ok || !slices.Equal(got, want) {
		t.Fatalf("Terms = %v, %v; want %v", got, ok, want)
	}
	if n := ix.Nearest(u, 1, nil); len(n) != 1 || n[0].Distance != d {
		t.Fatalf("Nearest = %v, want node 3 at %v", n, d)
	}
	if _, ok := ix.Terms(nil, u, 2); ok {
		t.Fatalf("Terms of a node never Set reported true")
	}
}

// TestNearestToStoredSignature: a query by a stored node gives what a
// query by its count vector gives, and the terms between two stored nodes
// are those between one's counts and the other's row; a node never Set
// reports false.
func TestNearestToStoredSignature(t *testing.T) {
	cat, err := catalog.New(delta.Undirected, 4)
	if err != nil {
		t.Fatal(err)
	}
	m := gdv.ForCatalog(cat)
	r := rand.New(rand.NewPCG(11, 12))
	vecs := make([][]uint64, 3000)
	ix := gdv.NewIndex(m)
	for x := range vecs {
		if x%10 == 9 {
			continue // a gap: never Set
		}
		vecs[x] = make([]uint64, m.NumOrbits())
		synthetic(r, vecs[x])
		ix.Set(uint32(x), vecs[x])
	}
	for _, x := range []uint32{0, 1, 17, 2500, 2998} {
		not := func(y uint32) bool { return y != x }
		got, ok := ix.NearestTo(x, 25, not)
		if want := ix.Nearest(vecs[x], 25, not); !ok || !slices.Equal(got, want) {
			t.Fatalf("NearestTo(%d) = %v, %v; want %v", x, got, ok, want)
		}
		for _, y := range []uint32{3, 400, x} {
			got, ok := ix.TermsBetween(nil, x, y)
			want, _ := ix.Terms(nil, vecs[x], y)
			if !ok || !slices.Equal(got, want) {
				t.Fatalf("TermsBetween(%d, %d) = %v, %v; want %v", x, y, got, ok, want)
			}
		}
	}
	if _, ok := ix.NearestTo(9, 5, nil); ok {
		t.Errorf("NearestTo a node never Set reported true")
	}
	if _, ok := ix.TermsBetween(nil, 0, 19); ok {
		t.Errorf("TermsBetween with a node never Set reported true")
	}
	if got, ok := ix.NearestTo(0, 0, nil); !ok || got != nil {
		t.Errorf("NearestTo k=0 = %v, %v", got, ok)
	}
}
