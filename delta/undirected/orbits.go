package undirected

import (
	"fmt"

	"orbitwatch/delta"
)

// Orbit indices, Pržulj 2007 numbering.
const (
	oEdge        = 0  // either node of an edge
	oPathEnd3    = 1  // end of the 3-path
	oPathMid3    = 2  // middle of the 3-path
	oTriangle    = 3  // any node of a triangle
	oPathEnd4    = 4  // end of the 4-path
	oPathMid4    = 5  // middle of the 4-path
	oStarLeaf    = 6  // leaf of the 3-star
	oStarCentre  = 7  // centre of the 3-star
	oCycle       = 8  // any node of the 4-cycle
	oTailEnd     = 9  // pendant node of the tailed triangle
	oTailDeg2    = 10 // degree-2 node of the tailed triangle
	oTailDeg3    = 11 // degree-3 node of the tailed triangle
	oDiamondDeg2 = 12 // degree-2 node of the diamond
	oDiamondDeg3 = 13 // degree-3 node of the diamond
	oClique      = 14 // any node of K4

	maxOrbits = 15
)

// numOrbits returns the orbit count of graphlets on 2..maxNodes nodes:
// 1, 4 or 15. Other sizes are a programmer error.
func numOrbits(maxNodes int) int {
	switch maxNodes {
	case 2:
		return 1
	case 3:
		return 4
	case 4:
		return 15
	}
	panic(fmt.Sprintf("undirected: maxNodes %d not supported (want 2, 3 or 4)", maxNodes))
}

func checkKind(g *delta.Graph) {
	if g.Kind() != delta.Undirected {
		panic("undirected: graph kind is " + g.Kind().String())
	}
}
