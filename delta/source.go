package delta

// memSource is a Source over an in-memory graph and a counter's current
// records: what a store would hold at the same point of the log.
type memSource struct {
	g   *Graph
	c   Counter
	buf []byte
}

// NewMemSource returns a Source that reads g's adjacency and c's current
// records. Tests use it to hold Derive and Restore to the in-memory path;
// it is not safe for concurrent use.
func NewMemSource(g *Graph, c Counter) Source { return &memSource{g: g, c: c} }

func (s *memSource) Record(x uint32) ([]byte, error) {
	s.buf = s.c.AppendRecord(s.buf[:0], x)
	if len(s.buf) == 0 {
		return nil, nil
	}
	return s.buf, nil
}

func (s *memSource) Adjacent(x uint32, dst []Adj) ([]Adj, error) {
	dst = dst[:0]
	if int(x) >= s.g.NumNodes() {
		return dst, nil
	}
	it := s.g.Neighbors(x).Iterator()
	for it.HasNext() {
		y := it.Next()
		dst = append(dst, Adj{Node: y, Links: s.g.Links(x, y)})
	}
	return dst, nil
}

func (s *memSource) Linked(x, y uint32) (Link, error) {
	if int(x) >= s.g.NumNodes() || int(y) >= s.g.NumNodes() {
		return 0, nil
	}
	return s.g.Links(x, y), nil
}
