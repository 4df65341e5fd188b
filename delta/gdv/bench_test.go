package gdv_test

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"orbitwatch/bench/gen"
	"orbitwatch/delta"
	"orbitwatch/delta/catalog"
	"orbitwatch/delta/gdv"
)

// synthetic returns a count vector shaped like a GDV of a heavy-tailed
// graph: a degree drawn from a Pareto tail, orbit i non-zero with a
// probability falling with i, and non-zero counts growing as a power of
// the degree with log-normal noise. It is for timing only; tests use
// counted vectors.
func synthetic(r *rand.Rand, v []uint64) {
	deg := math.Floor(math.Pow(1-r.Float64(), -1/1.5))
	for i := range v {
		v[i] = 0
		if i > 0 && r.Float64() < float64(i)/float64(len(v)+10) {
			continue
		}
		exp := 1 + 2*float64(i%15)/15
		x := math.Pow(deg, exp) * math.Exp(r.NormFloat64())
		v[i] = uint64(math.Min(x, 1e15))
	}
}

func syntheticIndex(m *gdv.Metric, nodes int, seed uint64) (*gdv.Index, [][]uint64) {
	r := rand.New(rand.NewPCG(seed, 1))
	ix := gdv.NewIndex(m)
	ix.Grow(nodes)
	v := make([]uint64, m.NumOrbits())
	var queries [][]uint64
	for x := range nodes {
		synthetic(r, v)
		ix.Set(uint32(x), v)
		if x%(nodes/16) == 0 {
			queries = append(queries, append([]uint64(nil), v...))
		}
	}
	return ix, queries
}

// BenchmarkNearest times one k = 20 query over 200k and 1M nodes for the
// 15- and 73-orbit catalogs, on both cores (the targets: 1M × 15
// ≤ 100 ms, 1M × 73 ≤ 500 ms). Queries are vectors of indexed nodes.
func BenchmarkNearest(b *testing.B) {
	for _, k := range []int{4, 5} {
		cat, err := catalog.New(delta.Undirected, k)
		if err != nil {
			b.Fatal(err)
		}
		m := gdv.ForCatalog(cat)
		for _, nodes := range []int{200_000, 1_000_000} {
			ix, queries := syntheticIndex(m, nodes, 1)
			for _, c := range []struct {
				name   string
				filter func(uint32) bool
			}{
				{"k=20", nil},
				// A filter that passes nothing keeps the result empty, so
				// no node is pruned early: every distance is summed in full.
				{"none-pass", func(uint32) bool { return false }},
			} {
				b.Run(fmt.Sprintf("orbits=%d/nodes=%d/%s", m.NumOrbits(), nodes, c.name), func(b *testing.B) {
					b.ReportAllocs()
					i := 0
					for b.Loop() {
						ix.Nearest(queries[i%len(queries)], 20, c.filter)
						i++
					}
				})
			}
		}
	}
}

// BenchmarkDriftBA200k times GCD-11 between two checkpoints of one
// Barabási–Albert graph (bench/gen, 200,000 nodes, m = 5): after 80% of
// its edges and after all of them, counted by the static recount. "profiles"
// is the whole drift (both Profiles from the orbit matrices, then
// Compare); "compare" is Compare of two Profiles made once, the cost per
// step of a series whose cuts are each profiled once.
func BenchmarkDriftBA200k(b *testing.B) {
	edges := gen.BarabasiAlbert(200_000, 5, 1)
	count := func(edges []gen.Edge) *delta.Vectors {
		g := delta.NewGraph(delta.Undirected)
		g.Grow(gen.MaxNode(edges))
		for _, e := range edges {
			g.Link(e.U, e.V)
		}
		return orbits4(g)
	}
	early, late := count(edges[:len(edges)*4/5]), count(edges)
	var d gdv.Drift
	b.Run("profiles", func(b *testing.B) {
		b.ReportAllocs()
		for b.Loop() {
			d = drift(b, profile(b, early), profile(b, late))
		}
	})
	pa, pb := profile(b, early), profile(b, late)
	b.Run("compare", func(b *testing.B) {
		b.ReportAllocs()
		for b.Loop() {
			d = drift(b, pa, pb)
		}
	})
	b.Logf("GCD-11 between 80%% and 100%% of BA(200k, 5): %.4f over %d and %d nodes", d.GCD, pa.Nodes, pb.Nodes)
}

// BenchmarkNearestBA200k is BenchmarkNearest on counted vectors: the 15
// orbits of every node of BA(200k, m = 5) (bench/gen, static recount),
// queries the vectors of 16 nodes spread over the ids (old hubs first).
func BenchmarkNearestBA200k(b *testing.B) {
	vecs := orbits4(ba(200_000, 5, 1))
	cat, err := catalog.New(delta.Undirected, 4)
	if err != nil {
		b.Fatal(err)
	}
	ix := gdv.NewIndex(gdv.ForCatalog(cat))
	batch := ix.NewBatch()
	for x := range uint32(vecs.NumNodes()) {
		batch.Set(x, vecs.Row(x))
	}
	ix.Apply(batch)
	b.ReportAllocs()
	i := 0
	for b.Loop() {
		x := uint32(i % 16 * (vecs.NumNodes() / 16))
		ix.Nearest(vecs.Row(x), 20, func(y uint32) bool { return y != x })
		i++
	}
}

// BenchmarkIndexSet times storing one node's new vector, the work per
// changed node at a cut: Set under the lock, or Batch.Set (the logarithms,
// outside the lock) and Apply (the copy, under it) per 4,096 nodes.
func BenchmarkIndexSet(b *testing.B) {
	for _, k := range []int{4, 5} {
		cat, err := catalog.New(delta.Undirected, k)
		if err != nil {
			b.Fatal(err)
		}
		m := gdv.ForCatalog(cat)
		r := rand.New(rand.NewPCG(1, 1))
		pool := make([][]uint64, 4096)
		for i := range pool {
			pool[i] = make([]uint64, m.NumOrbits())
			synthetic(r, pool[i])
		}
		ix := gdv.NewIndex(m)
		ix.Grow(1 << 20)
		b.Run(fmt.Sprintf("orbits=%d/Set", m.NumOrbits()), func(b *testing.B) {
			b.ReportAllocs()
			i := 0
			for b.Loop() {
				ix.Set(uint32(i*7919)%(1<<20), pool[i%len(pool)])
				i++
			}
		})
		b.Run(fmt.Sprintf("orbits=%d/Batch", m.NumOrbits()), func(b *testing.B) {
			b.ReportAllocs()
			batch := ix.NewBatch()
			i := 0
			for b.Loop() {
				batch.Set(uint32(i*7919)%(1<<20), pool[i%len(pool)])
				if i++; batch.Len() == 4096 {
					ix.Apply(batch)
					batch.Reset()
				}
			}
		})
	}
}
