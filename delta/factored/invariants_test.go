package factored

import (
	"fmt"
	"slices"

	"orbitwatch/delta"
)

// invariants recomputes every kept quantity of c from its definition on g
// (package doc, Counter, four, heavy) and returns the first that differs:
// the check that tells which update went wrong, cheap on test graphs.
func invariants(c *Counter, g *delta.Graph) error {
	n := g.NumNodes()
	c.grow(n)
	nb := func(x uint32) []uint32 { return g.Out(x).ToArray() }
	deg := func(x uint32) int64 { return int64(g.Out(x).GetCardinality()) }
	isHeavy := func(x uint32) bool { return deg(x) >= c.theta }
	common := func(p, q uint32) int64 { return int64(g.Out(p).AndCardinality(g.Out(q))) }
	for x := range uint32(n) {
		if c.isHeavy(x) != isHeavy(x) {
			return fmt.Errorf("node %d: heavy %v, degree %d, threshold %d", x, c.isHeavy(x), deg(x), c.theta)
		}
		var want node
		want.deg = deg(x)
		var hn []uint32
		for _, y := range nb(x) {
			if isHeavy(y) {
				hn = append(hn, y)
			} else {
				want.l1 += deg(y)
			}
			want.tri += common(x, y)
		}
		want.tri /= 2
		if c.nodes[x] != want {
			return fmt.Errorf("node %d: kept %+v, want %+v", x, c.nodes[x], want)
		}
		got := slices.Sorted(slices.Values(c.heavyN[x]))
		if !slices.Equal(got, hn) {
			return fmt.Errorf("node %d: heavy neighbours %v, want %v", x, got, hn)
		}
		for it := c.adj[x].runs(); it.next(); {
			for i, y := range it.nbr {
				if int64(it.tri[i]) != common(x, y) {
					return fmt.Errorf("edge %d-%d: %d triangles kept, want %d", x, y, it.tri[i], common(x, y))
				}
			}
		}
		if c.maxNodes == 3 {
			continue
		}
		var f four
		ns := nb(x)
		for i, p := range ns {
			for _, r := range ns[i+1:] {
				both := isHeavy(p) && isHeavy(r)
				cnt := common(p, r) - 1
				if !both {
					f.cyc += cnt
				}
				if g.HasEdge(p, r) {
					if !both {
						f.dd2 += cnt
					}
					for _, s := range ns {
						if s > r && g.HasEdge(p, s) && g.HasEdge(r, s) {
							f.k4++
						}
					}
				}
			}
		}
		if c.four[x] != f {
			return fmt.Errorf("node %d: kept %+v, want %+v", x, c.four[x], f)
		}
		if !isHeavy(x) {
			continue
		}
		hs := c.hv[x]
		var w heavy
		w.row = map[uint32]uint32{}
		for q := range uint32(n) {
			if q != x && isHeavy(q) && common(x, q) > 0 {
				w.row[q] = uint32(common(x, q))
			}
		}
		for _, y := range ns {
			w.al += c.nodes[y].l1
			w.b += choose2(deg(y) - 1)
			w.ct += c.nodes[y].tri
			w.dd += common(x, y) * (deg(y) - 2)
			w.ee += choose2(common(x, y))
		}
		if hs.al != w.al || hs.b != w.b || hs.ct != w.ct || hs.dd != w.dd || hs.ee != w.ee {
			return fmt.Errorf("heavy node %d: sums al %d b %d ct %d dd %d ee %d, want %d %d %d %d %d", x, hs.al, hs.b, hs.ct, hs.dd, hs.ee, w.al, w.b, w.ct, w.dd, w.ee)
		}
		if len(hs.row) != len(w.row) {
			return fmt.Errorf("heavy node %d: pair counts %v, want %v", x, hs.row, w.row)
		}
		for q, v := range w.row {
			if hs.row[q] != v {
				return fmt.Errorf("heavy node %d: pair counts %v, want %v", x, hs.row, w.row)
			}
		}
	}
	return nil
}
