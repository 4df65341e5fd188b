package bench

import (
	"fmt"
	"math/rand/v2"
	"runtime"
	"slices"
	"strconv"
	"time"

	"orbitwatch/bench/gen"
	"orbitwatch/delta"
	"orbitwatch/shard"
	"orbitwatch/stream"
)

// StreamEvents returns in as the events the product reads: nodes named by
// name, ids prefix followed by the event's index (publish dedupes by id),
// times in UTC seconds.
func StreamEvents(name gen.Namer, in []gen.Event, prefix string) []stream.Event {
	out := make([]stream.Event, len(in))
	for i, e := range in {
		op := stream.OpAdd
		if e.Op == gen.Remove {
			op = stream.OpRemove
		}
		out[i] = stream.Event{ID: prefix + strconv.Itoa(i), TS: time.Unix(e.Unix, 0).UTC(), HasTS: true, Op: op,
			Src: string(name(nil, e.U)), Dst: string(name(nil, e.V))}
	}
	return out
}

// AccountNamer names node ids as the benchmark logs do: acct-000123, and
// the ids from merchant on (when merchant > 0) shop-0000 and up.
func AccountNamer(merchant int) gen.Namer {
	if merchant <= 0 {
		return gen.Population{Accounts: 1 << 31}.AppendName
	}
	return gen.Population{Accounts: merchant, Shops: 1 << 20}.AppendName
}

// Product is the undirected 2–4 node counting state the product keeps
// (shard.Applier with the counter shard.NewCounting picks), built by
// applying a log of adds, with the log's names at hand for churn.
type Product struct {
	Applier *shard.Applier
	Edges   []gen.Edge // as added, on the generator's ids
	names   []string   // generator id → name
	ids     []uint32   // generator id → the applier's dense id
	seq     uint64
	unix    int64
	buf     []uint64
}

// NewProduct applies edges as adds, one second apart from 2026-01-01 UTC,
// to a fresh applier taking a cut every cuts of event time (0: none) with
// no OnCut: what a cut costs the applier (the changed records taken out)
// is paid, what the store and alert scoring add is not.
func NewProduct(edges []gen.Edge, name gen.Namer, cuts time.Duration) (*Product, error) {
	c, err := shard.NewCounting(delta.Undirected, 4)
	if err != nil {
		return nil, err
	}
	p := &Product{Applier: shard.NewApplier(c, 0, shard.Cuts{Every: cuts}), Edges: edges,
		unix: time.Date(2026, 1, 1, 0, 0, 0, 0, time.UTC).Unix()}
	n := gen.MaxNode(edges)
	p.names = make([]string, n)
	for i := range p.names {
		p.names[i] = string(name(nil, uint32(i)))
	}
	for _, e := range edges {
		if err := p.apply(stream.OpAdd, e); err != nil {
			return nil, err
		}
	}
	p.ids = make([]uint32, n)
	for i, s := range p.names {
		x, ok := p.Applier.Lookup(s)
		if !ok {
			return nil, fmt.Errorf("bench: node %s has no edge", s)
		}
		p.ids[i] = x
	}
	return p, nil
}

// apply applies one event of e through the applier, with the next log
// position and the next second of event time.
func (p *Product) apply(op stream.Op, e gen.Edge) error {
	p.seq++
	p.unix++
	return p.Applier.Apply(p.seq, stream.Event{TS: time.Unix(p.unix, 0).UTC(), HasTS: true, Op: op, Src: p.names[e.U], Dst: p.names[e.V]})
}

// Degree returns the degree of generator node x now.
func (p *Product) Degree(x uint32) int { return p.Applier.Graph().Degree(p.ids[x]) }

// MaxDegree returns the largest degree and its generator node.
func (p *Product) MaxDegree() (int, uint32) {
	best, at := -1, uint32(0)
	for x := range p.ids {
		if d := p.Degree(uint32(x)); d > best {
			best, at = d, uint32(x)
		}
	}
	return best, at
}

// Churn removes and at once re-adds each of edges (two events each, so
// the state ends as it began) and returns the cost per event. The edges
// must be present with multiplicity one.
func (p *Product) Churn(edges []gen.Edge) (Cost, error) {
	var c Cost
	m := mallocs()
	clock := startCPU()
	t0 := time.Now()
	for _, e := range edges {
		if err := p.apply(stream.OpRemove, e); err != nil {
			return c, err
		}
		if err := p.apply(stream.OpAdd, e); err != nil {
			return c, err
		}
	}
	c.Wall = time.Since(t0)
	c.CPU = clock.elapsed()
	c.Events = 2 * len(edges)
	c.Allocs = mallocs() - m
	return c, nil
}

// Read derives the current vector of each generator node in nodes and
// returns the cost per read (Events counts reads).
func (p *Product) Read(nodes []uint32) (Cost, error) {
	var c Cost
	m := mallocs()
	clock := startCPU()
	t0 := time.Now()
	for _, x := range nodes {
		var err error
		if p.buf, err = p.Applier.Vector(p.ids[x], p.buf); err != nil {
			return c, err
		}
	}
	c.Wall = time.Since(t0)
	c.CPU = clock.elapsed()
	c.Events = len(nodes)
	c.Allocs = mallocs() - m
	return c, nil
}

// Cost is the time and allocations of some events (or reads).
type Cost struct {
	Events    int
	Wall, CPU time.Duration // CPU: the process's, zero where not measured
	Allocs    uint64
}

// Add sums two costs.
func (c Cost) Add(d Cost) Cost {
	return Cost{c.Events + d.Events, c.Wall + d.Wall, c.CPU + d.CPU, c.Allocs + d.Allocs}
}

// WallUs and CPUUs are the microseconds per event.
func (c Cost) WallUs() float64 { return c.Wall.Seconds() * 1e6 / float64(c.Events) }
func (c Cost) CPUUs() float64  { return c.CPU.Seconds() * 1e6 / float64(c.Events) }

// AllocsPer is the heap allocations per event.
func (c Cost) AllocsPer() float64 { return float64(c.Allocs) / float64(c.Events) }

func mallocs() uint64 {
	var m runtime.MemStats
	runtime.ReadMemStats(&m)
	return m.Mallocs
}

// DegreeBuckets are the upper bounds of the endpoint degree classes the
// per-event tables use: ≤16, ≤128, ≤1,024, above.
var DegreeBuckets = []int{16, 128, 1024, int(^uint(0) >> 1)}

// BucketNames names DegreeBuckets.
var BucketNames = []string{"deg ≤ 16", "deg ≤ 128", "deg ≤ 1k", "deg > 1k"}

// Bucket returns the index in DegreeBuckets of degree d.
func Bucket(d int) int {
	i, _ := slices.BinarySearch(DegreeBuckets, d)
	return i
}

// SampleByDegree draws, for each degree class of the larger endpoint
// degree, up to n distinct edges uniformly among those of that class, and
// returns them with each class's share of all edges. Sampling within a
// class, not over all edges, gives the rare classes (edges at hubs) enough
// events to be timed.
func (p *Product) SampleByDegree(n int, seed uint64) (samples [][]gen.Edge, share []float64) {
	classes := make([][]gen.Edge, len(DegreeBuckets))
	for _, e := range p.Edges {
		b := Bucket(max(p.Degree(e.U), p.Degree(e.V)))
		classes[b] = append(classes[b], e)
	}
	r := rand.New(rand.NewPCG(seed, 3))
	samples = make([][]gen.Edge, len(classes))
	share = make([]float64, len(classes))
	for i, c := range classes {
		r.Shuffle(len(c), func(a, b int) { c[a], c[b] = c[b], c[a] })
		samples[i] = c[:min(n, len(c))]
		share[i] = float64(len(c)) / float64(len(p.Edges))
	}
	return samples, share
}

// SampleUniform draws up to n distinct edges uniformly.
func (p *Product) SampleUniform(n int, seed uint64) []gen.Edge {
	all := slices.Clone(p.Edges)
	r := rand.New(rand.NewPCG(seed, 4))
	r.Shuffle(len(all), func(a, b int) { all[a], all[b] = all[b], all[a] })
	return all[:min(n, len(all))]
}
