package storage

import "math"

// Dict interns node ids (strings, bytes as given) to dense uint32 ids
// 0, 1, 2, … in order of first appearance. Interning happens in memory; a
// Checkpoint carries the entries added since the previous one (From).
// A Dict is not safe for concurrent use.
type Dict struct {
	names []string
	ids   map[string]uint32
}

// NewDict returns an empty dictionary, for a store with no checkpoint yet.
func NewDict() *Dict {
	return &Dict{ids: make(map[string]uint32)}
}

// Intern returns id's dense number, adding it when new (isNew true).
func (d *Dict) Intern(id string) (x uint32, isNew bool) {
	if x, ok := d.ids[id]; ok {
		return x, false
	}
	return d.add(id), true
}

// InternBytes is Intern for an id held in a byte slice; looking up a known
// id allocates nothing, and b may be reused afterwards.
func (d *Dict) InternBytes(b []byte) (x uint32, isNew bool) {
	if x, ok := d.ids[string(b)]; ok {
		return x, false
	}
	return d.add(string(b)), true
}

func (d *Dict) add(id string) uint32 {
	if len(d.names) == math.MaxUint32 {
		panic("storage: node dictionary full")
	}
	x := uint32(len(d.names))
	d.names = append(d.names, id)
	d.ids[id] = x
	return x
}

// Lookup returns id's number if it is interned.
func (d *Dict) Lookup(id string) (uint32, bool) {
	x, ok := d.ids[id]
	return x, ok
}

// Name returns the id of number x; x must be below Len.
func (d *Dict) Name(x uint32) string {
	if int(x) >= len(d.names) {
		panic("storage: Dict.Name of an unknown number")
	}
	return d.names[x]
}

// Len returns the number of interned ids.
func (d *Dict) Len() int { return len(d.names) }

// From returns the names of numbers n, n+1, … (shared with the Dict: the
// slice stays valid, entries are never changed).
func (d *Dict) From(n int) []string { return d.names[n:len(d.names):len(d.names)] }
