package catalog

import (
	"sort"
	"strings"

	"gonum.org/v1/gonum/stat/combin"

	"orbitwatch/delta"
)

// Words of the short directed orbit names: the account (the node whose
// orbit it is) pays, is paid by, or pays and is paid by ("two-way with")
// each other node it is joined to.
const (
	shortPays   = "pays"
	shortPaidBy = "paid by"
	shortTwoWay = "two-way with"
)

// shortNames gives every orbit its Short name. Undirected orbits keep
// their Name. A directed orbit is described from the account's side: the
// other nodes of the graphlet are letters A, B, C, and the name lists what
// the account does with each ("pays A and B, paid by C") and then the
// payments among the others ("A pays B; C two-way with B"). The letters go
// to the others in the order that gives the first string in byte order
// among those that introduce A, B, C in reading order, so the name is a
// function of the orbit alone; it describes the graphlet completely, so
// two orbits never share one.
func shortNames(c *Catalog) {
	for i := range c.Orbits {
		o := &c.Orbits[i]
		if c.Kind != delta.Directed {
			o.Short = o.Name
			continue
		}
		o.Short = directedShort(&c.Graphlets[o.Graphlet], o.Positions[0])
	}
}

// directedShort names position p of the directed graphlet g.
func directedShort(g *Graphlet, p int) string {
	var others []int
	for q := range g.Nodes {
		if q != p {
			others = append(others, q)
		}
	}
	arc := make(map[[2]int]bool, len(g.Edges))
	for _, e := range g.Edges {
		arc[e] = true
	}
	best, bestOrdered := "", false
	for _, perm := range combin.Permutations(len(others), len(others)) {
		letter := make(map[int]byte, len(others))
		for i, q := range others {
			letter[q] = 'A' + byte(perm[i])
		}
		s := renderShort(p, others, letter, arc)
		ordered := lettersInOrder(s, len(others))
		if best == "" || (ordered && !bestOrdered) || (ordered == bestOrdered && s < best) {
			best, bestOrdered = s, ordered
		}
	}
	return best
}

// renderShort writes the short name of account p with the others lettered.
func renderShort(p int, others []int, letter map[int]byte, arc map[[2]int]bool) string {
	var pays, paidBy, twoWay []byte
	for _, q := range others {
		out, in := arc[[2]int{p, q}], arc[[2]int{q, p}]
		switch {
		case out && in:
			twoWay = append(twoWay, letter[q])
		case out:
			pays = append(pays, letter[q])
		case in:
			paidBy = append(paidBy, letter[q])
		}
	}
	var own []string
	for _, part := range []struct {
		verb    string
		letters []byte
	}{{shortPays, pays}, {shortPaidBy, paidBy}, {shortTwoWay, twoWay}} {
		if len(part.letters) > 0 {
			own = append(own, part.verb+" "+listLetters(part.letters))
		}
	}
	// objects[l][verb]: the letters that l pays (0) or is two-way with
	// (1), each pair once, from its lower letter for two-way pairs.
	var objects [4][2][]byte
	for i, a := range others {
		for _, b := range others[i+1:] {
			la, lb := letter[a], letter[b]
			ab, ba := arc[[2]int{a, b}], arc[[2]int{b, a}]
			switch {
			case ab && ba:
				lo, hi := min(la, lb), max(la, lb)
				objects[lo-'A'][1] = append(objects[lo-'A'][1], hi)
			case ab:
				objects[la-'A'][0] = append(objects[la-'A'][0], lb)
			case ba:
				objects[lb-'A'][0] = append(objects[lb-'A'][0], la)
			}
		}
	}
	var among []string
	for l, verbs := range objects {
		for v, ls := range verbs {
			if len(ls) > 0 {
				verb := shortPays
				if v == 1 {
					verb = shortTwoWay
				}
				among = append(among, string('A'+byte(l))+" "+verb+" "+listLetters(ls))
			}
		}
	}
	return strings.Join(append([]string{strings.Join(own, ", ")}, among...), "; ")
}

// listLetters joins letters in order as "A", "A and B", "A, B and C".
func listLetters(ls []byte) string {
	sort.Slice(ls, func(i, j int) bool { return ls[i] < ls[j] })
	var b strings.Builder
	for i, l := range ls {
		switch {
		case i == 0:
		case i == len(ls)-1:
			b.WriteString(" and ")
		default:
			b.WriteString(", ")
		}
		b.WriteByte(l)
	}
	return b.String()
}

// lettersInOrder reports whether the first n capital letters first occur
// in s in the order A, B, C.
func lettersInOrder(s string, n int) bool {
	next := byte('A')
	for i := 0; i < len(s); i++ {
		if l := s[i]; l >= 'A' && l < 'A'+byte(n) {
			if l > next {
				return false
			}
			if l == next {
				next++
			}
		}
	}
	return true
}
