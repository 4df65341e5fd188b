package five_test

import (
	"fmt"

	"orbitwatch/delta"
	"orbitwatch/delta/five"
)

// A 5-path 0–1–2–3–4 holds one 5-node set, the 5-path itself: node 0 is
// its end (orbit 15), node 1 next to the end (16), node 2 the middle
// (17), and the 5-node columns 15–72 hold nothing else.
func ExampleRecounter_Count() {
	g := delta.NewGraph(delta.Undirected)
	g.Grow(5)
	for x := uint32(0); x < 4; x++ {
		g.Increment(x, x+1)
	}
	v, err := five.NewRecounter(five.Options{}).Count(g)
	if err != nil {
		panic(err)
	}
	for x := uint32(0); x < 3; x++ {
		for o := 15; o < 73; o++ {
			if c := v.Get(x, o); c != 0 {
				fmt.Printf("node %d: orbit %d × %d\n", x, o, c)
			}
		}
	}
	// Output:
	// node 0: orbit 15 × 1
	// node 1: orbit 16 × 1
	// node 2: orbit 17 × 1
}
