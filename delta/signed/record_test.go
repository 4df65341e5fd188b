package signed

import (
	"errors"
	"testing"

	"orbitwatch/delta"
)

// alteredSource is a stored state with one node's record replaced.
type alteredSource struct {
	delta.Source
	node uint32
	rec  []byte
}

func (s alteredSource) Record(x uint32) ([]byte, error) {
	if x == s.node {
		return s.rec, nil
	}
	return s.Source.Record(x)
}

// TestRestoreRefusesWrongRecords: a record whose degrees disagree with the
// adjacency, a heavy record whose neighbour sums do not add up, a light
// record carrying sums and a record that does not decode are each a
// *delta.RecordError naming the node, from Restore and from Derive.
func TestRestoreRefusesWrongRecords(t *testing.T) {
	g, c, _ := churnGraph(300, 4, 8)
	src := delta.NewMemSource(g, c)
	var heavy, light uint32
	for x := range uint32(g.NumNodes()) {
		if c.heavy[x] {
			heavy = x
		} else if g.Degree(x) > 0 {
			light = x
		}
	}
	rec := func(x uint32) []byte { return append([]byte(nil), c.AppendRecord(nil, x)...) }
	bump := func(b []byte, i int) []byte {
		var counts [recordLen]uint64
		if err := delta.DecodeCounts(b, counts[:]); err != nil {
			t.Fatal(err)
		}
		counts[i]++
		return delta.AppendCounts(nil, counts[:])
	}
	cases := []struct {
		name string
		node uint32
		rec  []byte
	}{
		{"degree off", light, bump(rec(light), 1)},
		{"heavy sums off", heavy, bump(rec(heavy), 9)},
		{"light node with sums", light, bump(rec(light), 10)},
		{"bad uvarint", light, []byte{0x80}},
	}
	for _, tc := range cases {
		bad := alteredSource{src, tc.node, tc.rec}
		var re *delta.RecordError
		err := NewThreshold(8).Restore(g, bad)
		if !errors.As(err, &re) || re.Node != tc.node {
			t.Errorf("%s: Restore gave %v", tc.name, err)
		}
		if tc.name == "heavy sums off" {
			continue // Derive reads a heavy node's sums as stored
		}
		if _, err := c.Derive(bad, tc.node, nil); !errors.As(err, &re) || re.Node != tc.node {
			t.Errorf("%s: Derive gave %v", tc.name, err)
		}
	}
	if err := NewThreshold(8).Restore(g, src); err != nil {
		t.Fatalf("the true records: %v", err)
	}
}
