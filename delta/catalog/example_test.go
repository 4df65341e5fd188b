package catalog_test

import (
	"fmt"

	"orbitwatch/delta"
	"orbitwatch/delta/catalog"
)

// ExampleNew lists the undirected graphlets on 2–4 nodes with their orbits.
func ExampleNew() {
	c, err := catalog.New(delta.Undirected, 4)
	if err != nil {
		panic(err)
	}
	for _, o := range c.Orbits {
		fmt.Printf("%2d %-34s graphlet %d\n", o.ID, o.Name, o.Graphlet)
	}
	// Output:
	//  0 edge                               graphlet 0
	//  1 end of 3-path                      graphlet 1
	//  2 middle of 3-path                   graphlet 1
	//  3 triangle                           graphlet 2
	//  4 end of 4-path                      graphlet 3
	//  5 middle of 4-path                   graphlet 3
	//  6 leaf of 3-star                     graphlet 4
	//  7 centre of 3-star                   graphlet 4
	//  8 4-cycle                            graphlet 5
	//  9 tail end of tailed triangle        graphlet 6
	// 10 degree-2 node of tailed triangle   graphlet 6
	// 11 degree-3 node of tailed triangle   graphlet 6
	// 12 degree-2 node of diamond           graphlet 7
	// 13 degree-3 node of diamond           graphlet 7
	// 14 K4                                 graphlet 8
}
