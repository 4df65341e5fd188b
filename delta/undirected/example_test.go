package undirected_test

import (
	"fmt"

	"orbitwatch/delta"
	"orbitwatch/delta/undirected"
)

// Closing the 4-path 0–1–2–3 into a 4-cycle. Worked out by hand from the
// orbit definitions: the ends 0 and 3 gain an edge, a 3-path end, a 3-path
// middle and the cycle, and stop being 4-path ends; the middles 1 and 2
// gain a 3-path end and the cycle, and stop being 4-path middles.
func ExampleNewEngine() {
	g := delta.NewGraph(delta.Undirected)
	g.Grow(4)
	g.Link(0, 1)
	g.Link(1, 2)
	g.Link(2, 3)
	vec := undirected.NewRecounter(4).Recount(g)
	before := vec.Clone()
	e := undirected.NewEngine(4)
	e.Insert(g, 0, 3, func(x uint32, o int, d int64) {
		if err := vec.Add(x, o, d); err != nil {
			panic(err)
		}
	})
	g.Link(0, 3)
	for x := range uint32(4) {
		fmt.Println(x, before.Row(x), "→", vec.Row(x))
	}
	fmt.Println("recount agrees:", vec.Equal(undirected.NewRecounter(4).Recount(g)))
	// Output:
	// 0 [1 1 0 0 1 0 0 0 0 0 0 0 0 0 0] → [2 2 1 0 0 0 0 0 1 0 0 0 0 0 0]
	// 1 [2 1 1 0 0 1 0 0 0 0 0 0 0 0 0] → [2 2 1 0 0 0 0 0 1 0 0 0 0 0 0]
	// 2 [2 1 1 0 0 1 0 0 0 0 0 0 0 0 0] → [2 2 1 0 0 0 0 0 1 0 0 0 0 0 0]
	// 3 [1 1 0 0 1 0 0 0 0 0 0 0 0 0 0] → [2 2 1 0 0 0 0 0 1 0 0 0 0 0 0]
	// recount agrees: true
}
