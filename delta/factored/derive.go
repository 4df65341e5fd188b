package factored

import (
	"fmt"

	"orbitwatch/delta"
)

// deriver reads what a vector needs from a stored state, each record and
// adjacency list once.
type deriver struct {
	c    *Counter
	src  delta.Source
	recs map[uint32]*stored
	adj  map[uint32][]delta.Adj
}

func (r *deriver) record(x uint32) (*stored, error) {
	if s, ok := r.recs[x]; ok {
		return s, nil
	}
	b, err := r.src.Record(x)
	if err != nil {
		return nil, err
	}
	s, err := r.c.decode(b)
	if err != nil {
		return nil, fmt.Errorf("factored: node %d: %w", x, err)
	}
	r.recs[x] = &s
	return &s, nil
}

func (r *deriver) adjacent(x uint32) ([]delta.Adj, error) {
	if a, ok := r.adj[x]; ok {
		return a, nil
	}
	a, err := r.src.Adjacent(x, nil)
	if err != nil {
		return nil, err
	}
	r.adj[x] = a
	return a, nil
}

// degree returns d(x) as stored.
func (r *deriver) degree(x uint32) (uint64, error) {
	s, err := r.record(x)
	if err != nil {
		return 0, err
	}
	return s.d, nil
}

// Derive appends to dst[:0] node x's orbit vector at the state src holds.
// It reads x's record and adjacency and, per neighbour y, y's record; for
// a light y also y's adjacency and its neighbours' degrees (at most θ of
// them), for a heavy y one membership test per neighbour of x. A heavy x
// reads its kept sums and its heavy neighbours' pair counts instead of its
// neighbours.
func (c *Counter) Derive(src delta.Source, x uint32, dst []uint64) ([]uint64, error) {
	r := &deriver{c: c, src: src, recs: map[uint32]*stored{}, adj: map[uint32][]delta.Adj{}}
	var q local
	if err := r.gather(x, &q); err != nil {
		return nil, err
	}
	return c.vector(x, &q, dst)
}

func (r *deriver) gather(x uint32, q *local) error {
	sx, err := r.record(x)
	if err != nil {
		return err
	}
	q.d, q.t = sx.d, sx.t
	q.k4, q.cyc, q.dd2 = sx.k4, sx.cyc, sx.dd2
	nx, err := r.adjacent(x)
	if err != nil {
		return err
	}
	if uint64(len(nx)) != sx.d {
		return fmt.Errorf("factored: node %d: stored degree %d, stored adjacency %d", x, sx.d, len(nx))
	}
	if sx.heavy && r.c.maxNodes == 4 {
		q.s1 = sx.s1
		q.a = sx.al
		q.add(&q.a, q.mul(sx.d, sx.d))
		for g, n := range sx.row {
			dg, err := r.degree(g)
			if err != nil {
				return err
			}
			q.add(&q.a, q.mul(dg, n))
		}
		q.b, q.ct, q.dd, q.ee = sx.b, sx.ct, sx.dd, sx.ee
		return r.heavyPairs(sx.heavyN, q)
	}
	var heavyN []uint32
	for _, ny := range nx {
		y := ny.Node
		sy, err := r.record(y)
		if err != nil {
			return err
		}
		if sy.heavy {
			heavyN = append(heavyN, y)
		}
		if r.c.maxNodes == 3 {
			q.add(&q.s1, sy.d)
			continue
		}
		s1y, e, err := r.neighbour(x, nx, y, sy)
		if err != nil {
			return err
		}
		q.neighbour(sy.d, sy.t, s1y, e)
	}
	return r.heavyPairs(heavyN, q)
}

// neighbour returns s1(y) and tri(x,y) for a neighbour y of x.
func (r *deriver) neighbour(x uint32, nx []delta.Adj, y uint32, sy *stored) (s1y, e uint64, err error) {
	if sy.heavy {
		for _, w := range nx {
			if w.Node == y {
				continue
			}
			l, err := r.src.Linked(y, w.Node)
			if err != nil {
				return 0, 0, err
			}
			if l != 0 {
				e++
			}
		}
		return sy.s1, e, nil
	}
	ny, err := r.adjacent(y)
	if err != nil {
		return 0, 0, err
	}
	i := 0
	for _, z := range ny {
		dz, err := r.degree(z.Node)
		if err != nil {
			return 0, 0, err
		}
		s1y += dz
		for i < len(nx) && nx[i].Node < z.Node {
			i++
		}
		if i < len(nx) && nx[i].Node == z.Node {
			e++
		}
	}
	return s1y, e, nil
}

// heavyPairs adds the 4-cycles and diamonds read from heavy pair counts
// (see Counter.heavyPairs) for the heavy neighbours hn of a node.
func (r *deriver) heavyPairs(hn []uint32, q *local) error {
	if r.c.maxNodes == 3 {
		return nil
	}
	for i, p := range hn {
		sp, err := r.record(p)
		if err != nil {
			return err
		}
		for _, s := range hn[i+1:] {
			n := sp.row[s]
			if n == 0 {
				q.invalid = true
				continue
			}
			q.add(&q.cyc, n-1)
			l, err := r.src.Linked(p, s)
			if err != nil {
				return err
			}
			if l != 0 {
				q.add(&q.dd2, n-1)
			}
		}
	}
	return nil
}
