package catalog

import (
	"fmt"
	"sort"
	"sync"

	"gonum.org/v1/gonum/stat/combin"

	"orbitwatch/delta"
)

// Catalog lists the graphlets of one kind on 2..MaxNodes nodes with their
// automorphism orbits, numbered by the rule in the package documentation.
// A Catalog is shared and read-only: do not modify its slices.
type Catalog struct {
	Kind      delta.Kind
	MaxNodes  int
	Graphlets []Graphlet // indexed by graphlet id
	Orbits    []Orbit    // indexed by orbit id

	tables [maxK + 1]table // by node count k
}

// Graphlet is one connected graph up to isomorphism. Its positions
// 0..Nodes−1 are the node positions of its canonical adjacency code.
type Graphlet struct {
	ID    int      `json:"id"`
	Nodes int      `json:"nodes"`
	Edges [][2]int `json:"edges"` // edges i<j (undirected, signed) or arcs i→j (directed)
	// Neg[i] reports whether Edges[i] is a negative tie (signed catalogs
	// only).
	Neg  []bool `json:"neg,omitempty"`
	Name string `json:"name"`
	// Orbits holds the orbit id of each position 0..Nodes−1.
	Orbits []int `json:"orbits"`
	// Code is the canonical adjacency code: the least code over all
	// relabellings.
	Code uint32 `json:"code"`
}

// Orbit is one automorphism class of positions of a graphlet.
type Orbit struct {
	ID        int    `json:"id"`
	Graphlet  int    `json:"graphlet"`
	Positions []int  `json:"positions"`
	Name      string `json:"name"`
	// Short is the orbit's short name for analysts: for directed orbits
	// what the account pays and is paid by, with the other nodes as
	// letters ("pays A and B; A two-way with B"); for undirected ones
	// the same as Name.
	Short string `json:"short"`
	// Numbering is NumberingPublished when the id is the one of the
	// published numbering named in Source, NumberingProject when it is
	// this package's rule alone (see the package documentation).
	Numbering string `json:"numbering"`
	// Source names the publication a published id follows and says
	// whether it was checked or recalled from memory; empty for project
	// ids.
	Source string `json:"source,omitempty"`
}

// table maps every k-node adjacency code to its graphlet and the orbit of
// each tuple position.
type table struct {
	graphlet []int16
	orbits   [][5]int16
}

const maxK = 5

var cache [3][maxK + 1]struct {
	once sync.Once
	c    *Catalog
}

// New returns the catalog of the kind's graphlets on 2..maxNodes nodes.
// Supported: Undirected with maxNodes 2..5, Directed and Signed with
// maxNodes 2..4.
// Catalogs are deterministic and cached; the same pointer is returned for
// the same arguments.
func New(kind delta.Kind, maxNodes int) (*Catalog, error) {
	limit := 5
	switch kind {
	case delta.Undirected:
	case delta.Directed, delta.Signed:
		limit = 4
	default:
		return nil, fmt.Errorf("catalog: unknown graph kind %v", kind)
	}
	if maxNodes < 2 || maxNodes > limit {
		return nil, fmt.Errorf("catalog: %v graphlets on 2..%d nodes are not supported (max nodes 2..%d)", kind, maxNodes, limit)
	}
	e := &cache[kind][maxNodes]
	e.once.Do(func() { e.c = build(kind, maxNodes) })
	return e.c, nil
}

// NumOrbits returns the number of orbits, the length of a GDV.
func (c *Catalog) NumOrbits() int { return len(c.Orbits) }

// Lookup classifies the induced subgraph on an ordered k-node tuple from its
// adjacency code (see PairBit and ArcBit). It returns the graphlet id, or −1
// when the code is not (weakly) connected, and orbits[i], the orbit id of
// tuple position i (−1 for disconnected codes and for i ≥ k). Lookup is one
// table read; the array belongs to the catalog. k must be 2..MaxNodes and
// code below 2^bits with bits = k(k−1)/2 (undirected) or k(k−1) (directed,
// signed). A signed code with a sign bit whose pair has no edge is not a
// graph: Lookup reports it as −1.
func (c *Catalog) Lookup(k int, code uint32) (graphlet int, orbits *[5]int16) {
	if k < 2 || k > c.MaxNodes {
		panic("catalog: Lookup node count out of range")
	}
	t := &c.tables[k]
	if int(code) >= len(t.graphlet) {
		panic("catalog: Lookup code out of range")
	}
	return int(t.graphlet[code]), &t.orbits[code]
}

// class is one isomorphism class of connected k-node codes while building.
type class struct {
	kind    delta.Kind
	k       int
	code    uint32  // canonical code
	out, in []int   // per position degrees of the canonical code
	autos   [][]int // automorphisms of the canonical code
	orbits  [][]int // position classes under autos, each sorted
	id      int
}

func build(kind delta.Kind, maxNodes int) *Catalog {
	c := &Catalog{Kind: kind, MaxNodes: maxNodes}
	type perCode struct {
		canon uint32
		perm  []int // maps code positions onto canonical positions
	}
	var classes []*class
	codes := make([][]perCode, maxNodes+1)
	for k := 2; k <= maxNodes; k++ {
		arcs := arcsOf(kind, k)
		perms := combin.Permutations(k, k)
		n := 1 << codeBits(kind, k)
		codes[k] = make([]perCode, n)
		byCanon := map[uint32]*class{}
		for code := 0; code < n; code++ {
			if !connected(arcs, k, uint32(code)) || !signsOnEdges(kind, arcs, uint32(code)) {
				continue
			}
			best, bp := ^uint32(0), -1
			for i, p := range perms {
				if pc := permute(kind, arcs, uint32(code), p); pc < best {
					best, bp = pc, i
				}
			}
			codes[k][code] = perCode{best, perms[bp]}
			if byCanon[best] == nil {
				cl := &class{kind: kind, k: k, code: best}
				cl.out, cl.in = degrees(kind, arcs, k, best)
				for _, p := range perms {
					if permute(kind, arcs, best, p) == best {
						cl.autos = append(cl.autos, p)
					}
				}
				cl.orbits = positionClasses(k, cl.autos)
				byCanon[best] = cl
				classes = append(classes, cl)
			}
		}
	}
	sortClasses(kind, classes)
	if kind == delta.Undirected {
		publishedOrder(classes)
	}
	for id, cl := range classes {
		cl.id = id
		sortOrbits(kind, cl)
		g := Graphlet{ID: id, Nodes: cl.k, Code: cl.code, Orbits: make([]int, cl.k)}
		for _, a := range arcsOf(kind, cl.k) {
			if cl.code>>a.bit&1 != 0 && !a.neg {
				g.Edges = append(g.Edges, [2]int{a.i, a.j})
				if kind == delta.Signed {
					g.Neg = append(g.Neg, cl.code>>(a.bit+1)&1 != 0)
				}
			}
		}
		for _, pos := range cl.orbits {
			o := Orbit{ID: len(c.Orbits), Graphlet: id, Positions: pos}
			for _, p := range pos {
				g.Orbits[p] = o.ID
			}
			c.Orbits = append(c.Orbits, o)
		}
		c.Graphlets = append(c.Graphlets, g)
	}
	nameAll(c, classes)
	markProvenance(c)
	shortNames(c)
	byCode := make([]map[uint32]int, maxNodes+1)
	for _, g := range c.Graphlets {
		if byCode[g.Nodes] == nil {
			byCode[g.Nodes] = map[uint32]int{}
		}
		byCode[g.Nodes][g.Code] = g.ID
	}
	for k := 2; k <= maxNodes; k++ {
		t := table{graphlet: make([]int16, len(codes[k])), orbits: make([][5]int16, len(codes[k]))}
		arcs := arcsOf(kind, k)
		for code := range codes[k] {
			t.orbits[code] = [5]int16{-1, -1, -1, -1, -1}
			if !connected(arcs, k, uint32(code)) || !signsOnEdges(kind, arcs, uint32(code)) {
				t.graphlet[code] = -1
				continue
			}
			pc := codes[k][code]
			g := &c.Graphlets[byCode[k][pc.canon]]
			t.graphlet[code] = int16(g.ID)
			for i := 0; i < k; i++ {
				t.orbits[code][i] = int16(g.Orbits[pc.perm[i]])
			}
		}
		c.tables[k] = t
	}
	return c
}

// positionClasses returns the orbits of positions 0..k−1 under a group of
// permutations, each sorted, ordered by least position.
func positionClasses(k int, autos [][]int) [][]int {
	root := make([]int, k)
	for i := range root {
		root[i] = i
	}
	var find func(int) int
	find = func(i int) int {
		for root[i] != i {
			i = root[i]
		}
		return i
	}
	for _, p := range autos {
		for i, j := range p {
			a, b := find(i), find(j)
			if a != b {
				root[max(a, b)] = min(a, b)
			}
		}
	}
	var out [][]int
	index := map[int]int{}
	for i := 0; i < k; i++ {
		r := find(i)
		if _, ok := index[r]; !ok {
			index[r] = len(out)
			out = append(out, nil)
		}
		out[index[r]] = append(out[index[r]], i)
	}
	return out
}

// sortClasses orders graphlets: by node count, then edge (arc) count, then,
// for undirected and signed graphs, by maximum degree and by the degree
// sequence (descending, compared lexicographically), for signed graphs
// then by the number of negative ties, and last by canonical code.
func sortClasses(kind delta.Kind, cls []*class) {
	sort.Slice(cls, func(a, b int) bool {
		x, y := cls[a], cls[b]
		if x.k != y.k {
			return x.k < y.k
		}
		if ex, ey := sum(x.out), sum(y.out); ex != ey {
			return ex < ey
		}
		if kind != delta.Directed {
			dx, dy := descending(x.out), descending(y.out)
			if dx[0] != dy[0] {
				return dx[0] < dy[0]
			}
			if c := compareInts(dx, dy); c != 0 {
				return c < 0
			}
		}
		if nx, ny := sum(x.in), sum(y.in); kind == delta.Signed && nx != ny {
			return nx < ny
		}
		return x.code < y.code
	})
}

// sortOrbits orders the orbits of one graphlet. Undirected: by degree, then
// by the ascending list of neighbour degrees (compared lexicographically),
// then by least position. Signed: by degree, then negative degree, then as
// undirected. Directed: by out-degree, then in-degree, then least
// position.
func sortOrbits(kind delta.Kind, cl *class) {
	key := func(o []int) []int {
		p := o[0]
		switch kind {
		case delta.Directed:
			return []int{cl.out[p], cl.in[p], p}
		case delta.Signed:
			nb := neighbourDegrees(cl, p)
			return append(append([]int{cl.out[p], cl.in[p]}, nb...), p)
		}
		nb := neighbourDegrees(cl, p)
		return append(append([]int{cl.out[p]}, nb...), p)
	}
	sort.SliceStable(cl.orbits, func(a, b int) bool {
		return compareInts(key(cl.orbits[a]), key(cl.orbits[b])) < 0
	})
}

// neighbourDegrees returns the ascending degrees of the neighbours of
// position p in an undirected or signed class.
func neighbourDegrees(cl *class, p int) []int {
	var nb []int
	for q := 0; q < cl.k; q++ {
		if q != p && cl.code>>bitFor(cl.kind, p, q, false)&1 != 0 {
			nb = append(nb, cl.out[q])
		}
	}
	sort.Ints(nb)
	return nb
}

func sum(xs []int) int {
	s := 0
	for _, x := range xs {
		s += x
	}
	return s
}

func descending(xs []int) []int {
	d := append([]int(nil), xs...)
	sort.Sort(sort.Reverse(sort.IntSlice(d)))
	return d
}

// compareInts compares two int slices lexicographically, a shorter prefix
// first.
func compareInts(a, b []int) int {
	for i := 0; i < len(a) && i < len(b); i++ {
		if a[i] != b[i] {
			if a[i] < b[i] {
				return -1
			}
			return 1
		}
	}
	return len(a) - len(b)
}
