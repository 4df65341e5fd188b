package catalog

import (
	"fmt"
	"sort"
	"strconv"
	"strings"

	"orbitwatch/delta"
)

// nameAll gives every graphlet and orbit a plain-words name generated from
// its structure (see the package documentation), then makes names unique
// by appending a form letter where the structural rule leaves two equal.
func nameAll(c *Catalog, cls []*class) {
	shapes := make([]string, len(cls))
	for i, cl := range cls {
		switch c.Kind {
		case delta.Directed:
			shapes[i] = directedShape(cl)
		case delta.Signed:
			shapes[i] = signedShape(cl)
		default:
			shapes[i] = undirectedShape(cl.k, cl.code)
		}
	}
	for k := 2; k <= c.MaxNodes; k++ {
		// Per node count, so a smaller catalog stays a prefix of a larger.
		var idx []int
		var same []string
		for i, cl := range cls {
			if cl.k == k {
				idx = append(idx, i)
				same = append(same, shapes[i])
			}
		}
		disambiguate(same, " (form %c)")
		for j, i := range idx {
			shapes[i] = same[j]
		}
	}
	for i, cl := range cls {
		g := &c.Graphlets[i]
		g.Name = shapes[i]
		if c.Kind == delta.Directed && cl.k > 2 {
			g.Name = fmt.Sprintf("%d nodes, %d arcs: %s", cl.k, sum(cl.out), shapes[i])
		}
		roles := make([]string, len(cl.orbits))
		for j, pos := range cl.orbits {
			switch c.Kind {
			case delta.Directed:
				roles[j] = directedRole(cl, pos[0])
			case delta.Signed:
				roles[j] = signedRole(cl, pos[0])
			default:
				roles[j] = undirectedRole(cl, pos[0])
			}
		}
		disambiguate(roles, " (form %c)")
		for j := range cl.orbits {
			o := &c.Orbits[g.Orbits[cl.orbits[j][0]]]
			switch {
			case len(cl.orbits) == 1 && c.Kind == delta.Undirected:
				o.Name = shapes[i]
			case c.Kind != delta.Undirected:
				o.Name = roles[j] + " of " + article(shapes[i]) + shapes[i]
			default:
				o.Name = roles[j] + " of " + shapes[i]
			}
		}
	}
}

// article returns "an " before a vowel sound and "a " otherwise.
func article(s string) string {
	if strings.ContainsRune("aeiou", rune(s[0])) && !strings.HasPrefix(s, "one") {
		return "an "
	}
	return "a "
}

// disambiguate appends a form letter (a, b, …) to every name that occurs
// more than once, in order of occurrence.
func disambiguate(names []string, format string) {
	count := map[string]int{}
	for _, n := range names {
		count[n]++
	}
	seen := map[string]int{}
	for i, n := range names {
		if count[n] > 1 {
			names[i] = n + fmt.Sprintf(format, 'a'+seen[n])
			seen[n]++
		}
	}
}

// undirectedShape names a connected undirected k-node code: "edge",
// "triangle", "K<k>", "<k>-path", "<k−1>-star", "<k>-cycle", "diamond"
// (K4 minus an edge), "K<k> minus an edge", "tailed triangle" (a triangle
// with one pendant node), else "<k> nodes, <m> edges, degrees d1-d2-…".
func undirectedShape(k int, code uint32) string {
	deg, _ := degrees(delta.Undirected, arcsOf(delta.Undirected, k), k, code)
	m := sum(deg) / 2
	d := descending(deg)
	full := k * (k - 1) / 2
	switch {
	case k == 2:
		return "edge"
	case m == full && k == 3:
		return "triangle"
	case m == full:
		return "K" + strconv.Itoa(k)
	case m == k-1 && d[0] == 2:
		return fmt.Sprintf("%d-path", k)
	case m == k-1 && d[0] == k-1:
		return fmt.Sprintf("%d-star", k-1)
	case m == k && d[0] == 2:
		return fmt.Sprintf("%d-cycle", k)
	case m == full-1 && k == 4:
		return "diamond"
	case m == full-1:
		return fmt.Sprintf("K%d minus an edge", k)
	case k == 4 && m == 4 && d[0] == 3:
		return "tailed triangle"
	}
	parts := make([]string, k)
	for i, x := range d {
		parts[i] = strconv.Itoa(x)
	}
	return fmt.Sprintf("%d nodes, %d edges, degrees %s", k, m, strings.Join(parts, "-"))
}

// undirectedRole names position p of an undirected class: "end",
// "middle" or "node <i> from an end" on paths, "leaf" or "centre" on
// stars, "tail end" on the tailed triangle, else "degree-<d> node",
// followed by " next to degrees …" when the degree alone does not tell the
// orbits of the graphlet apart.
func undirectedRole(cl *class, p int) string {
	shape := undirectedShape(cl.k, cl.code)
	d := cl.out[p]
	switch {
	case strings.HasSuffix(shape, "-path"):
		e := pathDistance(cl, p)
		if e == 0 {
			return "end"
		}
		if e == (cl.k-1)/2 {
			return "middle"
		}
		return fmt.Sprintf("node %d from an end", e)
	case strings.HasSuffix(shape, "-star"):
		if d == 1 {
			return "leaf"
		}
		return "centre"
	case shape == "tailed triangle" && d == 1:
		return "tail end"
	}
	role := fmt.Sprintf("degree-%d node", d)
	for _, o := range cl.orbits {
		if q := o[0]; q != p && cl.out[q] == d {
			return role + " next to degrees " + joinInts(neighbourDegrees(cl, p))
		}
	}
	return role
}

// pathDistance returns the distance of position p from the nearer end of
// a path class.
func pathDistance(cl *class, p int) int {
	best := cl.k
	for end := 0; end < cl.k; end++ {
		if cl.out[end] != 1 {
			continue
		}
		prev, cur := -1, end
		for dist := 0; ; dist++ {
			if cur == p {
				best = min(best, dist)
				break
			}
			next := -1
			for q := 0; q < cl.k; q++ {
				if q != cur && q != prev && cl.code>>PairBit(cur, q)&1 != 0 {
					next = q
				}
			}
			if next < 0 {
				break
			}
			prev, cur = cur, next
		}
	}
	return best
}

// underlying returns the undirected code of a directed code: positions
// adjacent in either direction share an edge.
func underlying(k int, code uint32) uint32 {
	var u uint32
	for b := 1; b < k; b++ {
		for a := 0; a < b; a++ {
			if code>>ArcBit(a, b)&1 != 0 || code>>ArcBit(b, a)&1 != 0 {
				u |= 1 << PairBit(a, b)
			}
		}
	}
	return u
}

// reciprocal counts the reciprocal pairs of a directed code.
func reciprocal(k int, code uint32) int {
	r := 0
	for b := 1; b < k; b++ {
		for a := 0; a < b; a++ {
			if code>>ArcBit(a, b)&1 != 0 && code>>ArcBit(b, a)&1 != 0 {
				r++
			}
		}
	}
	return r
}

// directedShape names a directed class: "one-way arc" and "reciprocal
// pair" on two nodes; "out-star with <k−1> payees", "in-star with <k−1>
// payers" (a star, or the 3-path, whose
// centre pays or is paid by all), "directed <k>-path" and "directed
// <k>-cycle" for those orientations without reciprocal pairs; "reciprocal
// <shape>" when every pair is reciprocal; else the underlying undirected
// shape with the number of reciprocal pairs and the descending out-degrees.
func directedShape(cl *class) string {
	u := underlying(cl.k, cl.code)
	base := undirectedShape(cl.k, u)
	r := reciprocal(cl.k, cl.code)
	ud, _ := degrees(delta.Undirected, arcsOf(delta.Undirected, cl.k), cl.k, u)
	edges := sum(ud) / 2
	maxOut, maxIn := descending(cl.out)[0], descending(cl.in)[0]
	oneWayChain := true // every node pays at most one and is paid by at most one
	for i := range cl.in {
		oneWayChain = oneWayChain && cl.in[i] <= 1 && cl.out[i] <= 1
	}
	star := edges == cl.k-1 && descending(ud)[0] == cl.k-1
	path := edges == cl.k-1 && descending(ud)[0] == 2
	cycle := edges == cl.k && descending(ud)[0] == 2
	switch {
	case cl.k == 2 && r == 0:
		return "one-way arc"
	case cl.k == 2:
		return "reciprocal pair"
	case r == edges:
		return "reciprocal " + base
	case r == 0 && star && maxOut == cl.k-1:
		return fmt.Sprintf("out-star with %d payees", cl.k-1)
	case r == 0 && star && maxIn == cl.k-1:
		return fmt.Sprintf("in-star with %d payers", cl.k-1)
	case r == 0 && oneWayChain && path:
		return fmt.Sprintf("directed %d-path", cl.k)
	case r == 0 && oneWayChain && cycle:
		return fmt.Sprintf("directed %d-cycle", cl.k)
	}
	pairs := "no reciprocal pair"
	switch {
	case r == 1:
		pairs = "1 reciprocal pair"
	case r > 1:
		pairs = fmt.Sprintf("%d reciprocal pairs", r)
	}
	return fmt.Sprintf("%s with %s, out-degrees %s", base, pairs, joinInts(descending(cl.out)))
}

// directedRole names position p of a directed class by what it pays and
// is paid: "payer" / "payee" / "both sides" on two nodes, "any node" when
// the graphlet has one orbit, "centre"/"leaf" on stars, "start", "end",
// "middle" on directed paths, else "node paying <out>, paid by <in>",
// followed by the neighbours' out/in degrees when that does not tell the
// orbits apart.
func directedRole(cl *class, p int) string {
	out, in := cl.out[p], cl.in[p]
	shape := directedShape(cl)
	switch {
	case cl.k == 2 && shape == "reciprocal pair":
		return "both sides"
	case cl.k == 2 && out == 1:
		return "payer"
	case cl.k == 2:
		return "payee"
	case len(cl.orbits) == 1:
		return "any node"
	case strings.HasPrefix(shape, "out-star") || strings.HasPrefix(shape, "in-star"):
		if out+in == cl.k-1 {
			return "centre"
		}
		return "leaf"
	case strings.HasPrefix(shape, "directed ") && strings.HasSuffix(shape, "-path"):
		switch {
		case in == 0:
			return "start"
		case out == 0:
			return "end"
		case cl.k == 3:
			return "middle"
		}
	}
	role := fmt.Sprintf("node paying %d, paid by %d", out, in)
	for _, o := range cl.orbits {
		if q := o[0]; q != p && cl.out[q] == out && cl.in[q] == in {
			return role + ", next to " + directedNeighbours(cl, p)
		}
	}
	return role
}

// directedNeighbours lists the out/in degrees of the nodes adjacent to p,
// sorted, as "o/i" pairs.
func directedNeighbours(cl *class, p int) string {
	var parts []string
	for q := 0; q < cl.k; q++ {
		if q != p && (cl.code>>ArcBit(p, q)&1 != 0 || cl.code>>ArcBit(q, p)&1 != 0) {
			parts = append(parts, fmt.Sprintf("%d/%d", cl.out[q], cl.in[q]))
		}
	}
	sort.Strings(parts)
	return strings.Join(parts, " ")
}

func joinInts(xs []int) string {
	parts := make([]string, len(xs))
	for i, x := range xs {
		parts[i] = strconv.Itoa(x)
	}
	return strings.Join(parts, "-")
}

// signedUnderlying returns the undirected code of a signed code: its
// edges without their signs.
func signedUnderlying(k int, code uint32) uint32 {
	var u uint32
	for b := 1; b < k; b++ {
		for a := 0; a < b; a++ {
			if eb, _ := SignedBits(a, b); code>>eb&1 != 0 {
				u |= 1 << PairBit(a, b)
			}
		}
	}
	return u
}

// signedShape names a signed class: "positive tie" and "negative tie" on
// two nodes, else the underlying undirected shape as "all-positive
// <shape>", "all-negative <shape>" or "<shape> with <n> negative
// tie(s)", and for a shape with a cycle whether it is balanced or
// unbalanced.
func signedShape(cl *class) string {
	base := undirectedShape(cl.k, signedUnderlying(cl.k, cl.code))
	m, n := sum(cl.out)/2, sum(cl.in)/2
	var name string
	switch {
	case cl.k == 2 && n == 0:
		return "positive tie"
	case cl.k == 2:
		return "negative tie"
	case n == 0:
		name = "all-positive " + base
	case n == m:
		name = "all-negative " + base
	case n == 1:
		name = base + " with 1 negative tie"
	default:
		name = fmt.Sprintf("%s with %d negative ties", base, n)
	}
	switch {
	case m < cl.k: // a tree: no cycle to balance
	case balanced(cl):
		name += " (balanced)"
	default:
		name += " (unbalanced)"
	}
	return name
}

// balanced reports whether a connected signed class is balanced in the
// sense of Cartwright & Harary 1956: its nodes split into two camps with
// every positive tie inside a camp and every negative tie between the
// camps (equivalently, every cycle has an even number of negative ties).
func balanced(cl *class) bool {
	camp := []int{0, -1, -1, -1, -1}
	for changed := true; changed; {
		changed = false
		for b := 1; b < cl.k; b++ {
			for a := 0; a < b; a++ {
				eb, nb := SignedBits(a, b)
				if cl.code>>eb&1 == 0 {
					continue
				}
				side := int(cl.code >> nb & 1)
				switch {
				case camp[a] >= 0 && camp[b] >= 0:
					if camp[a]^camp[b] != side {
						return false
					}
				case camp[a] >= 0:
					camp[b], changed = camp[a]^side, true
				case camp[b] >= 0:
					camp[a], changed = camp[b]^side, true
				}
			}
		}
	}
	return true
}

// signedRole names position p of a signed class by its own ties: "end"
// on two nodes, "any node" when the graphlet has one orbit, else "node on
// a negative tie", "node between two negative ties", "node between a
// positive and a negative tie", "node with two positive ties and a
// negative tie" …, followed by the neighbours' degrees when the ties do
// not tell the orbits of the graphlet apart.
func signedRole(cl *class, p int) string {
	if cl.k == 2 {
		return "end"
	}
	if len(cl.orbits) == 1 {
		return "any node"
	}
	d, n := cl.out[p], cl.in[p]
	var role string
	switch {
	case d == 1 && n == 0:
		role = "node on a positive tie"
	case d == 1:
		role = "node on a negative tie"
	case d == 2 && n == 1:
		role = "node between a positive and a negative tie"
	case d == 2:
		role = "node between " + ties(d-n, "positive") + ties(n, "negative")
	case n == 0 || n == d:
		role = "node with " + ties(d-n, "positive") + ties(n, "negative")
	default:
		role = "node with " + ties(d-n, "positive") + " and " + ties(n, "negative")
	}
	for _, o := range cl.orbits {
		if q := o[0]; q != p && cl.out[q] == d && cl.in[q] == n {
			return role + ", next to degrees " + joinInts(neighbourDegrees(cl, p))
		}
	}
	return role
}

// ties says "a positive tie", "two negative ties" …; nothing for none.
func ties(n int, sign string) string {
	switch n {
	case 0:
		return ""
	case 1:
		return "a " + sign + " tie"
	}
	return []string{"", "", "two", "three", "four"}[n] + " " + sign + " ties"
}
