package delta

import "strconv"

// Counter keeps one kind's per-node records under simple-graph changes and
// derives a node's orbit vector from its own record and its neighbours'
// when the vector is read (DESIGN.md §7). A record holds the quantities
// that change only near a changed edge (degrees, triangles, cycles …), so
// an update writes what changed locally and nothing proportional to a
// hub's degree. A kind with no factored form keeps its orbit vector as its
// record (NewEager); the rest of the system sees one interface either way.
//
// Insert and Delete are called before the graph changes, exactly when the
// simple graph changes (multiplicity 0→1 and 1→0): g is the graph without
// (Insert) or with (Delete) the edge. A counter may Link and Unlink g to
// look at the other side, but leaves g as it found it. An error is an
// invariant violation (a count leaving its range, an inconsistent record):
// the counter can no longer be trusted and the caller must stop.
//
// Vector and Derive do not modify the counter; reads may run concurrently
// with each other, never with Insert, Delete, Changed or Restore.
type Counter interface {
	Kind() Kind
	MaxNodes() int
	NumOrbits() int

	// Insert updates the records for adding uv (the arc u→v in a
	// Directed graph) to g, which lacks it; u != v and both nodes exist
	// in g. neg is the sign of the new edge in a Signed graph, false
	// otherwise.
	Insert(g *Graph, u, v uint32, neg bool) error
	// Delete updates the records for removing uv (u→v) from g, which has
	// it.
	Delete(g *Graph, u, v uint32) error

	// Vector appends node x's exact orbit vector (NumOrbits counts) to
	// dst[:0] and returns it. x must be a node of the graph the events
	// built. The only errors are a count that does not fit in a uint64
	// and, after a bug, a record that contradicts another: counts are
	// never wrapped or clamped.
	Vector(x uint32, dst []uint64) ([]uint64, error)

	// Changed calls visit, in increasing id order, for every node whose
	// record (AppendRecord) may differ from its value at the previous call
	// of Changed (or of Restore), then forgets them. These are the nodes a
	// checkpoint stores and alert scoring reads.
	Changed(visit func(x uint32))
	// AppendRecord appends x's record in the kind's stored form; an
	// all-zero record appends nothing.
	AppendRecord(dst []byte, x uint32) []byte

	// Restore resets the counter to the state stored in src for graph g:
	// g holds the adjacency, src the records written by AppendRecord at
	// the same point of the log. An error names a record that does not
	// decode or does not agree with g.
	Restore(g *Graph, src Source) error
	// Derive appends to dst[:0] node x's orbit vector at the state src
	// holds, from the stored records and adjacency alone (the in-memory
	// state is not read): the as-of read. Errors are src's or a record's
	// that does not decode.
	Derive(src Source, x uint32, dst []uint64) ([]uint64, error)
}

// Link says how a node y is joined to a node x, seen from x.
type Link uint8

const (
	// LinkOut: x→y (every undirected edge sets LinkOut and LinkIn).
	LinkOut Link = 1 << iota
	// LinkIn: y→x.
	LinkIn
	// LinkNeg: the pair's sign is negative (Signed graphs).
	LinkNeg
)

// Adj is one neighbour of a node and how it is joined.
type Adj struct {
	Node  uint32
	Links Link
}

// Source is a stored state at one point of the log: the adjacency and the
// records of every node, as Derive and Restore read them. Its errors are
// the store's (I/O, corruption).
type Source interface {
	// Record returns x's record as AppendRecord wrote it; nil for a node
	// with no stored record (all zero). The slice is valid until the next
	// call.
	Record(x uint32) ([]byte, error)
	// Adjacent appends to dst[:0] the nodes joined to x, in increasing id
	// order, with their links.
	Adjacent(x uint32, dst []Adj) ([]Adj, error)
	// Linked returns how y is joined to x (0: not at all).
	Linked(x, y uint32) (Link, error)
}

// RecordError is a stored record that does not decode or does not agree
// with the stored adjacency (Restore) — a damaged or foreign store.
type RecordError struct {
	Node uint32
	Err  error
}

func (e *RecordError) Error() string {
	return "record of node " + strconv.FormatUint(uint64(e.Node), 10) + ": " + e.Err.Error()
}

func (e *RecordError) Unwrap() error { return e.Err }
