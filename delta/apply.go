package delta

// ApplySigned adds (add) or removes one unit of the sign neg of the pair
// {u,v} of the Signed graph g and keeps c's records in step with it (c may
// be nil: the graph alone). c is called only when the signed simple graph
// changes, as Counter requires: Insert(neg) while g lacks uv when the edge
// appears, Delete while g has uv (shown with multiplicity 1 of its sign)
// when it vanishes, and for a change of sign
// of an edge that stays (a first negative unit on a positive edge, the
// last negative unit going while positive ones stay) Delete with the old
// sign and then Insert with the new one, so a counter sees a sign flip as
// the two changes it is.
//
// A rejected event (ErrSelfLoop, ErrAbsent for a sign whose multiplicity
// is zero, ErrMultiplicity) changes nothing and is returned as it is. Any
// other error is c's, an invariant violation: g is left as it was before
// the event and the caller must stop trusting c. changed reports whether
// the signed simple graph changed.
func ApplySigned(g *Graph, c Counter, u, v uint32, neg, add bool) (changed bool, err error) {
	p, n, err := g.NextMultiplicities(u, v, neg, add)
	if err != nil {
		return false, err
	}
	return SetPair(g, c, u, v, p, n)
}

// SetPair sets the multiplicities of {u,v} (the arc u→v in a Directed g)
// to pos and neg (neg is 0 unless g is Signed) and keeps c's records in
// step, calling c as ApplySigned does: Insert while g lacks the pair when
// it appears, Delete while g shows it with multiplicity 1 of its old sign
// when it vanishes, and both for a change of sign. It moves a state to
// another one cut's net changes apart (a pair may go from any
// multiplicity to any other at once). An error is c's, an invariant
// violation: g is left as it was. u != v.
func SetPair(g *Graph, c Counter, u, v uint32, pos, neg uint32) (changed bool, err error) {
	p0, n0 := g.Multiplicities(u, v)
	was, now := p0+n0 > 0, pos+neg > 0
	if c == nil || (was == now && (n0 > 0) == (neg > 0)) {
		return g.SetMultiplicities(u, v, pos, neg), nil
	}
	g.Grow(int(max(u, v)) + 1)
	if was {
		// The counter sees the pair as a simple edge of its old sign.
		if n0 > 0 {
			g.SetMultiplicities(u, v, 0, 1)
		} else {
			g.SetMultiplicities(u, v, 1, 0)
		}
		if err := c.Delete(g, u, v); err != nil {
			g.SetMultiplicities(u, v, p0, n0)
			return false, err
		}
		g.SetMultiplicities(u, v, 0, 0)
	}
	if now {
		if err := c.Insert(g, u, v, neg > 0); err != nil {
			g.SetMultiplicities(u, v, p0, n0)
			return false, err
		}
	}
	g.SetMultiplicities(u, v, pos, neg)
	return true, nil
}
