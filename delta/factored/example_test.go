package factored_test

import (
	"fmt"

	"orbitwatch/delta"
	"orbitwatch/delta/factored"
)

// Four accounts pay each other in a ring, then one pair closes a chord.
// The vectors follow from the definitions by hand: on the 4-cycle every
// node has degree 2 (orbit 0), ends two 3-paths (1), is the middle of one
// (2) and sits on the 4-cycle (8). The chord 0–2 turns the ring into a
// diamond: nodes 0 and 2 get degree 3, one triangle each with 1 and with
// 3 (orbit 3 = 2), the middle of the induced 3-path 1–0–3 (2) and the
// degree-3 position of the diamond (13); node 1 keeps degree 2, sits in
// one triangle, ends the induced 3-paths 1–0–3 and 1–2–3 (orbit 1 = 2)
// and takes the diamond's degree-2 position (12).
func ExampleCounter() {
	g := delta.NewGraph(delta.Undirected)
	g.Grow(4)
	c := factored.New(4)
	link := func(u, v uint32) {
		if err := c.Insert(g, u, v, false); err != nil {
			panic(err)
		}
		g.Link(u, v)
	}
	vector := func(x uint32) []uint64 {
		vec, err := c.Vector(x, nil)
		if err != nil {
			panic(err)
		}
		return vec
	}
	for _, e := range [][2]uint32{{0, 1}, {1, 2}, {2, 3}, {3, 0}} {
		link(e[0], e[1])
	}
	fmt.Println("ring   ", vector(0))
	link(0, 2)
	fmt.Println("chord 0", vector(0))
	fmt.Println("chord 1", vector(1))
	// Output:
	// ring    [2 2 1 0 0 0 0 0 1 0 0 0 0 0 0]
	// chord 0 [3 0 1 2 0 0 0 0 0 0 0 0 0 1 0]
	// chord 1 [2 2 0 1 0 0 0 0 0 0 0 0 1 0 0]
}
