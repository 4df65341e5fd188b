package delta

import "errors"

// Reasons an edge event is rejected. A rejected event changes nothing.
var (
	// ErrSelfLoop: an edge from a node to itself.
	ErrSelfLoop = errors.New("self-loop")
	// ErrAbsent: a remove of an edge whose multiplicity is zero.
	ErrAbsent = errors.New("remove of absent edge")
	// ErrMultiplicity: a multiplicity that would pass 2^32−1.
	ErrMultiplicity = errors.New("edge multiplicity overflow")
)
