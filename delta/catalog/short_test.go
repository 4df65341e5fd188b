package catalog

import (
	"fmt"
	"strings"
	"testing"

	"orbitwatch/delta"
)

// parseShort reads a directed short name back into the arcs of a tuple:
// the account is position 0 and letter A is position 1, B 2, C 3. It
// returns the node count and the arcs, or an error naming what it could
// not read. It is the reader an analyst is meant to be: it knows only the
// words "pays", "paid by", "two-way with" and lists "A", "A and B",
// "A, B and C".
func parseShort(s string) (int, [][2]int, error) {
	pos := func(l string) (int, error) {
		if len(l) != 1 || l[0] < 'A' || l[0] > 'C' {
			return 0, fmt.Errorf("%q is not a letter A–C", l)
		}
		return int(l[0]-'A') + 1, nil
	}
	list := func(s string) ([]int, error) {
		var out []int
		for _, part := range strings.Split(strings.ReplaceAll(s, " and ", ", "), ", ") {
			p, err := pos(part)
			if err != nil {
				return nil, err
			}
			out = append(out, p)
		}
		return out, nil
	}
	nodes := 1
	var arcs [][2]int
	add := func(a, b int, twoWay bool) {
		nodes = max(nodes, a+1, b+1)
		arcs = append(arcs, [2]int{a, b})
		if twoWay {
			arcs = append(arcs, [2]int{b, a})
		}
	}
	clauses := strings.Split(s, "; ")
	for _, own := range splitOwn(clauses[0]) {
		for _, verb := range []string{shortPays, shortPaidBy, shortTwoWay} {
			rest, ok := strings.CutPrefix(own, verb+" ")
			if !ok {
				continue
			}
			ps, err := list(rest)
			if err != nil {
				return 0, nil, err
			}
			for _, p := range ps {
				switch verb {
				case shortPays:
					add(0, p, false)
				case shortPaidBy:
					add(p, 0, false)
				default:
					add(0, p, true)
				}
			}
		}
	}
	for _, c := range clauses[1:] {
		subject, rest, _ := strings.Cut(c, " ")
		a, err := pos(subject)
		if err != nil {
			return 0, nil, fmt.Errorf("clause %q: %w", c, err)
		}
		twoWay := false
		if r, ok := strings.CutPrefix(rest, shortTwoWay+" "); ok {
			rest, twoWay = r, true
		} else if r, ok := strings.CutPrefix(rest, shortPays+" "); ok {
			rest = r
		} else {
			return 0, nil, fmt.Errorf("clause %q has no verb", c)
		}
		ps, err := list(rest)
		if err != nil {
			return 0, nil, fmt.Errorf("clause %q: %w", c, err)
		}
		for _, p := range ps {
			add(a, p, twoWay)
		}
	}
	return nodes, arcs, nil
}

// splitOwn splits the account's clause "pays A and B, paid by C, two-way
// with D" at the commas that start a new verb.
func splitOwn(s string) []string {
	var out []string
	for _, part := range strings.Split(s, ", ") {
		verb := strings.HasPrefix(part, shortPays+" ") || strings.HasPrefix(part, shortPaidBy+" ") || strings.HasPrefix(part, shortTwoWay+" ")
		if !verb && len(out) > 0 {
			out[len(out)-1] += ", " + part // a list "A, B and C"
			continue
		}
		out = append(out, part)
	}
	return out
}

// TestDirectedShortNamesReadBack holds every directed short name to its
// orbit: read back as arcs (account at position 0) and classified by the
// catalog's own table, the name must give the orbit it names. Names must
// be unique and no longer than 80 bytes.
func TestDirectedShortNamesReadBack(t *testing.T) {
	c, err := New(delta.Directed, 4)
	if err != nil {
		t.Fatal(err)
	}
	seen := map[string]int{}
	for _, o := range c.Orbits {
		if prev, dup := seen[o.Short]; dup {
			t.Errorf("orbits %d and %d share the short name %q", prev, o.ID, o.Short)
		}
		seen[o.Short] = o.ID
		if len(o.Short) > 80 || o.Short == "" {
			t.Errorf("orbit %d short name %q is empty or longer than 80 bytes", o.ID, o.Short)
		}
		k, arcs, err := parseShort(o.Short)
		if err != nil {
			t.Fatalf("orbit %d short name %q: %v", o.ID, o.Short, err)
		}
		if k != c.Graphlets[o.Graphlet].Nodes {
			t.Fatalf("orbit %d short name %q names %d nodes, graphlet has %d", o.ID, o.Short, k, c.Graphlets[o.Graphlet].Nodes)
		}
		_, orbits := c.Lookup(k, Code(delta.Directed, arcs))
		if int(orbits[0]) != o.ID {
			t.Errorf("orbit %d (%s) short name %q reads back as orbit %d", o.ID, o.Name, o.Short, orbits[0])
		}
	}
	// Spot checks of the wording, written by hand from the orbit names.
	for _, w := range []struct {
		orbit int
		short string
	}{
		{0, "paid by A"},
		{2, "two-way with A"},
		{7, "pays A, paid by B"},
		{19, "pays A, paid by B; A pays B"},
		{32, "two-way with A and B; A two-way with B"},
		{34, "pays A, B and C"},
	} {
		if got := c.Orbits[w.orbit].Short; got != w.short {
			t.Errorf("orbit %d (%s): short name %q, want %q", w.orbit, c.Orbits[w.orbit].Name, got, w.short)
		}
	}
}

// TestParseShortCatchesWrongNames shows the read-back can fail: names
// with a payment turned round or dropped read back as other orbits.
func TestParseShortCatchesWrongNames(t *testing.T) {
	c, err := New(delta.Directed, 3)
	if err != nil {
		t.Fatal(err)
	}
	for _, wrong := range []struct {
		orbit int
		short string
	}{
		{19, "pays A, paid by B; B pays A"}, // transitive, not a cycle
		{3, "paid by A"},                    // 2 nodes
		{6, "pays A; B pays A"},             // leaf of an in-star
	} {
		k, arcs, err := parseShort(wrong.short)
		if err != nil {
			t.Fatal(err)
		}
		if _, orbits := c.Lookup(k, Code(delta.Directed, arcs)); int(orbits[0]) == wrong.orbit {
			t.Errorf("wrong name %q reads back as orbit %d", wrong.short, wrong.orbit)
		}
	}
}

// TestUndirectedShortIsName: undirected orbits keep their names.
func TestUndirectedShortIsName(t *testing.T) {
	c, err := New(delta.Undirected, 5)
	if err != nil {
		t.Fatal(err)
	}
	for _, o := range c.Orbits {
		if o.Short != o.Name {
			t.Errorf("undirected orbit %d: short %q, name %q", o.ID, o.Short, o.Name)
		}
	}
}
