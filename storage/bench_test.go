package storage

import (
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"orbitwatch/delta"
)

// benchGraph is a fictional payments graph: n accounts, m uniformly random
// payments (repeats raise the multiplicity), and 15-orbit vectors whose
// counts spread over several orders of magnitude as real GDVs do.
func benchGraph(n, m int, rng *rand.Rand) (*Dict, *delta.Graph, *delta.Vectors, [][2]uint32) {
	d := NewDict()
	for i := range n {
		d.Intern(acct(uint64(i)))
	}
	g := delta.NewGraph(delta.Undirected)
	g.Grow(n)
	edges := make([][2]uint32, 0, m)
	for len(edges) < m {
		u, v := uint32(rng.IntN(n)), uint32(rng.IntN(n))
		if u == v {
			continue
		}
		if _, err := g.Increment(u, v); err != nil {
			panic(err)
		}
		edges = append(edges, [2]uint32{u, v})
	}
	vec := delta.NewVectors(n, 15)
	for x := range uint32(n) {
		for o, row := 0, vec.Row(x); o < 15; o++ {
			row[o] = rng.Uint64N(1 << (2 + o%12))
		}
	}
	return d, g, vec, edges
}

// tableBytes is the size of dir's tables and value logs: what stays on
// disk once the store is closed.
func tableBytes(b *testing.B, dir string) int64 {
	var n int64
	ents, err := os.ReadDir(dir)
	if err != nil {
		b.Fatal(err)
	}
	for _, e := range ents {
		if strings.HasSuffix(e.Name(), ".sst") || strings.HasSuffix(e.Name(), ".vlog") {
			fi, err := os.Stat(filepath.Join(dir, e.Name()))
			if err != nil {
				b.Fatal(err)
			}
			n += fi.Size()
		}
	}
	return n
}

// edgeChanges lists every pair of edges with its multiplicity in g.
func edgeChanges(g *delta.Graph, pairs [][2]uint32) []EdgeChange {
	out := make([]EdgeChange, len(pairs))
	for i, e := range pairs {
		out[i] = EdgeChange{U: e[0], V: e[1], Mult: g.Multiplicity(e[0], e[1])}
	}
	return out
}

// recordChanges encodes the rows of nodes as records.
func recordChanges(vec *delta.Vectors, nodes []uint32) []RecordChange {
	out := make([]RecordChange, len(nodes))
	for i, x := range nodes {
		out[i] = RecordChange{Node: x, Data: delta.AppendCounts(nil, vec.Row(x))}
	}
	return out
}

// BenchmarkCheckpoint loads a 1M-edge, 200k-account graph with 15-count
// records into a store in one checkpoint, then times update checkpoints of
// 20k changed edges (10k deleted, 10k added) and the 40k endpoint records.
// It reports the bytes on disk per stored edge (both ends) and per record
// of the initial load (from the size after Close, which compacts level 0),
// per update entry (changed edge or record version) of the updates, and,
// for the design choice, what storing each changed node's whole neighbour
// bitmap instead would add per changed edge (raw Roaring bytes, before
// compression), and the time to Load the result.
func BenchmarkCheckpoint(b *testing.B) {
	const nodes, edges, change = 200_000, 1_000_000, 20_000
	rng := rand.New(rand.NewPCG(1, 2))
	d, g, vec, all := benchGraph(nodes, edges, rng)
	dir := b.TempDir()
	st := mustOpen(b, dir, undirected4)
	allNodes := make([]uint32, nodes)
	for i := range allNodes {
		allNodes[i] = uint32(i)
	}
	// Edges first, alone, to measure their bytes.
	cp := &Checkpoint{Seq: 1, Names: d.names, Edges: edgeChanges(g, all)}
	t0 := time.Now()
	if err := st.Commit(cp); err != nil {
		b.Fatal(err)
	}
	loadRate := float64(len(all)) / time.Since(t0).Seconds()
	st.Close()
	edgeBytes := tableBytes(b, dir)
	st = mustOpen(b, dir, undirected4)
	if err := st.Commit(&Checkpoint{Seq: 2, Records: recordChanges(vec, allNodes)}); err != nil {
		b.Fatal(err)
	}
	st.Close()
	vecBytes := tableBytes(b, dir) - edgeBytes
	st = mustOpen(b, dir, undirected4)
	stored := g.NumEdges()

	seq := uint64(2)
	var changed, versions int
	var bitmapBytes int64
	for b.Loop() {
		b.StopTimer()
		var pairs [][2]uint32
		var touched []uint32
		seen := map[uint32]bool{}
		for len(pairs) < change {
			e := all[rng.IntN(len(all))]
			if g.Multiplicity(e[0], e[1]) == 0 {
				continue
			}
			if _, err := g.Decrement(e[0], e[1]); err != nil {
				b.Fatal(err)
			}
			u, v := uint32(rng.IntN(nodes)), uint32(rng.IntN(nodes))
			if u == v {
				continue
			}
			if _, err := g.Increment(u, v); err != nil {
				b.Fatal(err)
			}
			pairs = append(pairs, e, [2]uint32{u, v})
			for _, x := range []uint32{e[0], e[1], u, v} {
				vec.Row(x)[0]++
				if !seen[x] {
					seen[x] = true
					touched = append(touched, x)
					bitmapBytes += int64(g.Out(x).GetSerializedSizeInBytes()) + 5
				}
			}
		}
		seq++
		cp := &Checkpoint{Seq: seq, Edges: edgeChanges(g, pairs), Records: recordChanges(vec, touched)}
		changed += len(cp.Edges)
		versions += len(cp.Records)
		b.StartTimer()
		if err := st.Commit(cp); err != nil {
			b.Fatal(err)
		}
	}
	b.StopTimer()
	before := edgeBytes + vecBytes
	st.Close()
	delta := tableBytes(b, dir) - before
	st = mustOpen(b, dir, undirected4)
	t0 = time.Now()
	s, err := st.Load()
	if err != nil {
		b.Fatal(err)
	}
	b.ReportMetric(time.Since(t0).Seconds(), "load-s")
	st.Close()
	if s.Graph.NumEdges() != g.NumEdges() {
		b.Fatalf("loaded %d edges, committed %d", s.Graph.NumEdges(), g.NumEdges())
	}
	b.ReportMetric(float64(edgeBytes)/float64(stored), "B/edge")
	b.ReportMetric(loadRate, "initial-edges/s")
	b.ReportMetric(float64(vecBytes)/nodes, "B/record")
	b.ReportMetric(float64(delta)/float64(changed+versions), "B/update-entry")
	b.ReportMetric(float64(bitmapBytes)/float64(changed), "bitmap-B/changed-edge")
	b.ReportMetric(float64(changed)/b.Elapsed().Seconds(), "changed-edges/s")
}
