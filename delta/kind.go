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
)

// String returns the kind's name as used on the command line and in files.
func (k Kind) String() string {
	switch k {
	case Undirected:
		return "undirected"
	case Directed:
		return "directed"
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
	}
	return 0, fmt.Errorf("unknown graph kind %q (want undirected or directed)", s)
}
