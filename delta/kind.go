package delta

import "fmt"

// Kind is the kind of graph counted.
type Kind uint8

const (
	// Undirected graphs: {u,v} is an edge while its multiplicity is > 0.
	Undirected Kind = iota
	// Directed graphs: each arc u→v has its own multiplicity; u→v and v→u
	// together are a reciprocal pair. Graphlets are weakly connected.
	Directed
	// Signed graphs: {u,v} keeps a positive and a negative multiplicity;
	// it is an edge while either is > 0, negative while the negative one
	// is > 0 (one open dispute marks the relation), positive otherwise.
	Signed
)

// String returns the kind's name as used on the command line and in files.
func (k Kind) String() string {
	switch k {
	case Undirected:
		return "undirected"
	case Directed:
		return "directed"
	case Signed:
		return "signed"
	}
	return fmt.Sprintf("Kind(%d)", uint8(k))
}

// ParseKind parses a kind name as written by String.
func ParseKind(s string) (Kind, error) {
	switch s {
	case "undirected":
		return Undirected, nil
	case "directed":
		return Directed, nil
	case "signed":
		return Signed, nil
	}
	return 0, fmt.Errorf("unknown graph kind %q (want undirected, directed or signed)", s)
}
