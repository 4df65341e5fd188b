package gdv_test

import (
	"fmt"
	"slices"

	"orbitwatch/delta"
	"orbitwatch/delta/brute"
	"orbitwatch/delta/catalog"
	"orbitwatch/delta/gdv"
)

// Two 3-stars and a triangle: the centre of one star has the other star's
// centre as its nearest signature, at distance 0; a centre and a leaf
// differ in the edge, both 3-path and both 3-star orbits (0, 1, 2, 6, 7).
func ExampleIndex() {
	g := delta.NewGraph(delta.Undirected)
	g.Grow(11)
	for _, e := range [][2]uint32{{0, 1}, {0, 2}, {0, 3}, {4, 5}, {4, 6}, {4, 7}, {8, 9}, {9, 10}, {10, 8}} {
		g.Link(e[0], e[1])
	}
	cat, _ := catalog.New(delta.Undirected, 4)
	vecs := brute.Count(g, cat)

	ix := gdv.NewIndex(gdv.ForCatalog(cat))
	b := ix.NewBatch()
	for x := range uint32(g.NumNodes()) {
		b.Set(x, vecs.Row(x))
	}
	ix.Apply(b)

	near := ix.Nearest(vecs.Row(0), 1, func(x uint32) bool { return x != 0 })
	fmt.Printf("nearest to 0: node %d at distance %v\n", near[0].Node, near[0].Distance)

	terms, _ := ix.Terms(nil, vecs.Row(0), 1)
	differ := gdv.Largest(terms, cat.NumOrbits())
	slices.Sort(differ)
	fmt.Println("orbits where centre 0 and leaf 1 differ:", differ)
	// Output:
	// nearest to 0: node 4 at distance 0
	// orbits where centre 0 and leaf 1 differ: [0 1 2 6 7]
}

// A network is at GCD-11 0 from itself.
func ExampleCompare() {
	g := delta.NewGraph(delta.Undirected)
	g.Grow(6)
	for _, e := range [][2]uint32{{0, 1}, {1, 2}, {2, 0}, {2, 3}, {3, 4}, {4, 5}} {
		g.Link(e[0], e[1])
	}
	cat, _ := catalog.New(delta.Undirected, 4)
	p, err := gdv.NewProfile(brute.Count(g, cat), gdv.GCD11Orbits())
	if err != nil {
		fmt.Println(err)
		return
	}
	d, _ := gdv.Compare(p, p)
	fmt.Printf("%d nodes, GCD-11 %v\n", p.Nodes, d.GCD)
	// Output:
	// 6 nodes, GCD-11 0
}
