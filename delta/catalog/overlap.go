package catalog

// Overlap returns the matrix A of the orbit equations of the catalog's
// undirected graphlets: A[p][o] is the number of spanning connected edge
// subsets of the graphlet of orbit o that, taken at a node in orbit o,
// form the graphlet of orbit p with that node in orbit p. A node's
// non-induced count of pattern p (copies of p's graphlet as a subgraph,
// not necessarily induced, with the node in orbit p) is then
//
//	N_p(x) = Σ_o A[p][o] · o_o(x),
//
// since every copy lies on one node set, whose induced subgraph is one
// graphlet. A[p][o] is zero unless both graphlets have the same node
// count and o's has at least as many edges; orbits are numbered by node
// count and then edge count, so A is upper triangular with a unit
// diagonal (Hočevar & Demšar 2014 solve systems of this kind). Nothing
// is typed in: the coefficients come from enumerating the submasks of
// every graphlet's code. It panics for a directed catalog.
func (c *Catalog) Overlap() [][]int64 {
	if c.Kind.String() != "undirected" {
		panic("catalog: Overlap of a directed catalog")
	}
	n := c.NumOrbits()
	a := make([][]int64, n)
	for p := range a {
		a[p] = make([]int64, n)
	}
	for _, h := range c.Graphlets {
		code := h.Code
		seen := map[int]bool{}
		for x, o := range h.Orbits {
			if seen[o] {
				continue
			}
			seen[o] = true
			// Lookup on all h.Nodes positions reports a graphlet only for
			// subsets that connect every position: the spanning ones.
			for sub := code; ; sub = (sub - 1) & code {
				if id, orbs := c.Lookup(h.Nodes, sub); id >= 0 {
					a[orbs[x]][o]++
				}
				if sub == 0 {
					break
				}
			}
		}
	}
	return a
}
