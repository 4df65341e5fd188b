package storage

import (
	"bytes"
	"encoding/binary"
	"fmt"
	"slices"
	"testing"
	"time"

	"orbitwatch/delta"
)

// model is a deterministic fictional payments scenario applied in memory:
// event i is a pure function of (seed, i) and the current graph, so any
// process can rebuild the state at any seq by replaying from 1, or continue
// from a loaded checkpoint. Records here are not a counter's (package delta
// writes those); they are arbitrary deterministic counts stored as
// records, enough to test that storage returns exactly what it was given.
type model struct {
	seed    uint64
	accts   uint64 // size of the account pool
	orbits  int
	seq     uint64
	dict    *Dict
	g       *delta.Graph
	vec     *delta.Vectors
	blobs   map[string][]byte
	edges   [][2]uint32
	nodes   []uint32
	changed map[string][]byte // blobs changed since the last checkpoint
	named   int               // dictionary entries already in a checkpoint
	keyed   map[string][]byte // keyed records
	keyCh   []KeyedChange     // keyed changes since the last checkpoint
}

func newModel(kind delta.Kind, orbits int, seed, accts uint64) *model {
	return &model{seed: seed, accts: accts, orbits: orbits, dict: NewDict(), g: delta.NewGraph(kind),
		vec: delta.NewVectors(0, orbits), blobs: map[string][]byte{}, changed: map[string][]byte{}, keyed: map[string][]byte{}}
}

// modelFrom continues the scenario from a loaded state, its records read
// back from st.
func modelFrom(st *Store, s *State, orbits int, seed, accts uint64) (*model, error) {
	m := newModel(s.Graph.Kind(), orbits, seed, accts)
	m.seq, m.dict, m.g, m.blobs, m.named = s.Seq, s.Dict, s.Graph, s.Blobs, s.Dict.Len()
	for _, k := range s.Keyed {
		m.keyed[k.Key] = k.Value
	}
	var err error
	m.vec, err = storedVectors(st, s.Seq, s.Dict.Len(), orbits)
	return m, err
}

// storedVectors reads every node's record at seq as counts.
func storedVectors(st *Store, seq uint64, nodes, orbits int) (*delta.Vectors, error) {
	vec := delta.NewVectors(nodes, orbits)
	if seq == 0 {
		return vec, nil
	}
	src, err := st.SourceAt(seq)
	if err != nil {
		return nil, err
	}
	defer src.Close()
	for x := range uint32(nodes) {
		b, err := src.Record(x)
		if err == nil {
			err = delta.DecodeCounts(b, vec.Row(x))
		}
		if err != nil {
			return nil, fmt.Errorf("record of node %d at %d: %w", x, seq, err)
		}
	}
	return vec, nil
}

// mix is SplitMix64's finaliser (Steele, Lea & Flood 2014).
func mix(x uint64) uint64 {
	x += 0x9e3779b97f4a7c15
	x = (x ^ (x >> 30)) * 0xbf58476d1ce4e5b9
	x = (x ^ (x >> 27)) * 0x94d049bb133111eb
	return x ^ (x >> 31)
}

func acct(i uint64) string { return fmt.Sprintf("acct-%06d", i) }

// step applies event seq+1: a payment between two accounts, or the
// reversal of an existing one; both endpoints' counts move.
func (m *model) step() {
	m.seq++
	h := mix(m.seed ^ mix(m.seq))
	a, b := h%m.accts, (h>>20)%m.accts
	if a == b {
		b = (b + 1) % m.accts
	}
	u, _ := m.dict.Intern(acct(a))
	v, _ := m.dict.Intern(acct(b))
	m.g.Grow(m.dict.Len())
	m.vec.Grow(m.dict.Len())
	if m.g.HasEdge(u, v) && (h>>40)%3 == 0 {
		if _, err := m.g.Decrement(u, v); err != nil {
			panic(err)
		}
	} else if _, err := m.g.Increment(u, v); err != nil {
		panic(err)
	}
	m.edges = append(m.edges, [2]uint32{u, v})
	for _, x := range []uint32{u, v} {
		row := m.vec.Row(x)
		for o := range row[:m.orbits-2] { // the last orbits stay zero: trailing-zero trimming
			row[o] += mix(h+uint64(x)*131+uint64(o)) % 3
		}
		m.nodes = append(m.nodes, x)
	}
	if m.seq%97 == 0 {
		m.setBlob("progress", binary.AppendUvarint([]byte("in.csv:"), m.seq))
	}
	if m.seq%389 == 0 {
		m.setBlob("scratch", []byte(fmt.Sprint("expiries up to ", m.seq)))
	}
	if m.seq%389 == 200 {
		m.setBlob("scratch", nil)
	}
	// Keyed records: one per pending "expiry" of every fifth event,
	// deleted 50 events later.
	if m.seq%5 == 0 {
		k := fmt.Sprintf("e%08d", m.seq)
		m.keyed[k] = []byte(acct(a))
		m.keyCh = append(m.keyCh, KeyedChange{Key: k, Value: m.keyed[k]})
	}
	if m.seq%5 == 0 && m.seq > 50 {
		k := fmt.Sprintf("e%08d", m.seq-50)
		delete(m.keyed, k)
		m.keyCh = append(m.keyCh, KeyedChange{Key: k})
	}
}

func (m *model) setBlob(name string, b []byte) {
	m.changed[name] = b
	if b == nil {
		delete(m.blobs, name)
	} else {
		m.blobs[name] = b
	}
}

func (m *model) watermark() time.Time {
	if m.seq == 0 {
		return time.Time{} // an empty store has no watermark
	}
	return time.Unix(1_800_000_000+int64(m.seq/7), 0).UTC()
}

// checkpoint returns the change since the last checkpoint and forgets it.
func (m *model) checkpoint() *Checkpoint {
	cp := &Checkpoint{Seq: m.seq, Watermark: m.watermark(), Names: slices.Clone(m.dict.names[m.named:]), Blobs: m.changed}
	for _, e := range m.edges {
		cp.Edges = append(cp.Edges, EdgeChange{U: e[0], V: e[1], Mult: m.g.Multiplicity(e[0], e[1])})
	}
	for _, x := range m.nodes {
		cp.Records = append(cp.Records, RecordChange{Node: x, Data: delta.AppendCounts(nil, m.vec.Row(x))})
	}
	cp.Keyed, m.keyCh = m.keyCh, nil
	m.named = m.dict.Len()
	m.edges, m.nodes, m.changed = nil, nil, map[string][]byte{}
	return cp
}

// run applies events up to seq to.
func (m *model) run(to uint64) {
	for m.seq < to {
		m.step()
	}
}

type edgeMult struct{ u, v, m uint32 }

func edgeList(g *delta.Graph) []edgeMult {
	var out []edgeMult
	g.ForEachEdge(func(u, v, m uint32) { out = append(out, edgeMult{u, v, m}) })
	return out
}

func names(d *Dict) []string { return append([]string(nil), d.names...) }

// checkState fails t unless s, with the records in st, is exactly the
// model's state.
func checkState(t *testing.T, st *Store, s *State, m *model) {
	t.Helper()
	if s.Seq != m.seq || !s.Watermark.Equal(m.watermark()) {
		t.Fatalf("loaded seq %d watermark %v, want %d %v", s.Seq, s.Watermark, m.seq, m.watermark())
	}
	if !slices.Equal(names(s.Dict), names(m.dict)) {
		t.Fatalf("dictionary differs: %d entries loaded, %d expected", s.Dict.Len(), m.dict.Len())
	}
	if s.Graph.NumNodes() != m.dict.Len() || s.Graph.NumEdges() != m.g.NumEdges() || !slices.Equal(edgeList(s.Graph), edgeList(m.g)) {
		t.Fatalf("graph differs: %d nodes %d edges loaded, %d %d expected", s.Graph.NumNodes(), s.Graph.NumEdges(), m.g.NumNodes(), m.g.NumEdges())
	}
	vec, err := storedVectors(st, s.Seq, s.Dict.Len(), m.orbits)
	if err != nil {
		t.Fatal(err)
	}
	if x, o, a, b, ok := vec.FirstDiff(m.vec); !ok || vec.NumNodes() != m.vec.NumNodes() {
		t.Fatalf("records differ at node %d orbit %d: %d loaded, %d expected (rows %d vs %d)", x, o, a, b, vec.NumNodes(), m.vec.NumNodes())
	}
	if len(s.Keyed) != len(m.keyed) {
		t.Fatalf("keyed records: %d loaded, %d expected", len(s.Keyed), len(m.keyed))
	}
	for i, k := range s.Keyed {
		if !bytes.Equal(m.keyed[k.Key], k.Value) || (i > 0 && s.Keyed[i-1].Key >= k.Key) {
			t.Fatalf("keyed record %q = %q, want %q, in key order", k.Key, k.Value, m.keyed[k.Key])
		}
	}
	if len(s.Blobs) != len(m.blobs) {
		t.Fatalf("blobs: %d loaded, %d expected", len(s.Blobs), len(m.blobs))
	}
	for k, b := range m.blobs {
		if !bytes.Equal(s.Blobs[k], b) {
			t.Fatalf("blob %q = %q, want %q", k, s.Blobs[k], b)
		}
	}
}

var undirected4 = Settings{Kind: delta.Undirected, MaxNodes: 4, NumOrbits: 15, Window: 30 * 24 * time.Hour}

func mustOpen(t testing.TB, dir string, s Settings) *Store {
	t.Helper()
	st, err := Open(dir, s)
	if err != nil {
		t.Fatal(err)
	}
	return st
}
