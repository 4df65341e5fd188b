package undirected

import (
	"math/rand/v2"
	"sync"
	"testing"
	"time"

	"orbitwatch/delta"
)

// The benchmark graph of DESIGN.md §7: Barabási–Albert, 200k nodes, m = 5.
const (
	benchNodes  = 200_000
	benchAttach = 5
	benchEvents = 1 << 14
)

var benchGraph = sync.OnceValues(func() (*delta.Graph, [][2]uint32) {
	rng := rand.New(rand.NewPCG(2026, 12))
	g := barabasiAlbert(rng, benchNodes, benchAttach)
	var all [][2]uint32
	g.ForEachEdge(func(u, v uint32, _ uint32) { all = append(all, [2]uint32{u, v}) })
	rng.Shuffle(len(all), func(i, j int) { all[i], all[j] = all[j], all[i] })
	return g, all[:benchEvents]
})

// sink is a consumer as an eager store would be: it adds every change
// into a dense nodes × orbits matrix and counts the changes.
type sink struct {
	acc     []int64
	emitted int64
}

// count only counts the changes, to show the engine's own cost.
func (s *sink) count(uint32, int, int64) { s.emitted++ }

func (s *sink) emit(x uint32, o int, d int64) {
	s.acc[int(x)*maxOrbits+o] += d
	s.emitted++
}

// BenchmarkEngine measures one edge event on the §7 graph (wall and process
// CPU time; the engine runs on one goroutine). "delete" deletes
// random existing edges (g untouched, as the contract allows), "insert"
// inserts them into the graph with all of them removed, "replay" deletes,
// unlinks, inserts and links one edge (two events). It reports events/s,
// ns/event, emitted changes per event, and, from an untimed pass,
// distinct (node, orbit) counters changed and adjacency entries walked per
// event.
func BenchmarkEngine(b *testing.B) {
	g, edges := benchGraph()
	for _, mode := range []string{"delete", "insert", "replay", "delete-count"} {
		b.Run(mode, func(b *testing.B) {
			e := NewEngine(4)
			s := &sink{acc: make([]int64, g.NumNodes()*maxOrbits)}
			emit := s.emit
			if mode == "delete-count" {
				mode, emit = "delete", s.count
			}
			if mode == "insert" {
				for _, uv := range edges {
					g.Unlink(uv[0], uv[1])
				}
				defer func() {
					for _, uv := range edges {
						g.Link(uv[0], uv[1])
					}
				}()
			}
			var changed, walked float64
			if mode != "replay" {
				changed, walked = shapeOnce(mode, e, g, edges)
			}
			warm(e, g)
			b.ReportAllocs()
			b.ResetTimer()
			cpu := cpuSeconds()
			s.emitted = 0
			events := 0
			for i := 0; b.Loop(); i++ {
				uv := edges[i%len(edges)]
				switch mode {
				case "delete":
					e.Delete(g, uv[0], uv[1], emit)
					events++
				case "insert":
					e.Insert(g, uv[0], uv[1], emit)
					events++
				default:
					e.Delete(g, uv[0], uv[1], emit)
					g.Unlink(uv[0], uv[1])
					e.Insert(g, uv[0], uv[1], emit)
					g.Link(uv[0], uv[1])
					events += 2
				}
			}
			cpu = cpuSeconds() - cpu
			sec := b.Elapsed().Seconds()
			b.ReportMetric(float64(events)/sec, "events/s")
			b.ReportMetric(sec*1e9/float64(events), "ns/event")
			b.ReportMetric(cpu*1e9/float64(events), "cpu-ns/event")
			b.ReportMetric(float64(s.emitted)/float64(events), "emits/event")
			if mode != "replay" {
				b.ReportMetric(changed, "changed/event")
				b.ReportMetric(walked, "walked/event")
			}
		})
	}
}

// warm grows the engine's buffers to the largest degree, as a long-running
// engine's are, so the timed loop shows the steady state.
func warm(e delta.Engine, g *delta.Graph) {
	hub := uint32(0)
	for x := range uint32(g.NumNodes()) {
		if g.Degree(x) > g.Degree(hub) {
			hub = x
		}
	}
	nb := g.Out(hub).Minimum()
	nop := func(uint32, int, int64) {}
	e.Delete(g, hub, nb, nop)
	e.Delete(g, nb, hub, nop)
}

var shapes = map[string][2]float64{}

// shapeOnce runs shape once per mode; b.Run calls a benchmark body
// several times.
func shapeOnce(mode string, e delta.Engine, g *delta.Graph, edges [][2]uint32) (changed, walked float64) {
	if s, ok := shapes[mode]; ok {
		return s[0], s[1]
	}
	changed, walked = shape(e, g, edges, mode == "insert")
	shapes[mode] = [2]float64{changed, walked}
	return changed, walked
}

// shape replays the events once, untimed, and returns the mean number of distinct (node, orbit) counters they change and of adjacency
// entries the engine walks (deg u + deg v + Σ_{w∈N(u)∪N(v)} deg w).
func shape(e delta.Engine, g *delta.Graph, edges [][2]uint32, insert bool) (changed, walked float64) {
	acc := make([]int64, g.NumNodes()*maxOrbits)
	var touched []int
	var distinct, entries int64
	emit := func(x uint32, o int, d int64) {
		i := int(x)*maxOrbits + o
		if acc[i] == 0 {
			touched = append(touched, i)
		}
		acc[i] += d
	}
	for _, uv := range edges {
		if insert {
			e.Insert(g, uv[0], uv[1], emit)
		} else {
			e.Delete(g, uv[0], uv[1], emit)
		}
		for _, i := range touched {
			if acc[i] != 0 {
				distinct++
			}
			acc[i] = 0
		}
		touched = touched[:0]
		entries += walk(g, uv[0], uv[1])
	}
	return float64(distinct) / float64(len(edges)), float64(entries) / float64(len(edges))
}

func walk(g *delta.Graph, u, v uint32) int64 {
	n := int64(g.Degree(u) + g.Degree(v))
	halo := g.Out(u).Clone()
	halo.Or(g.Out(v))
	halo.Remove(u)
	halo.Remove(v)
	halo.Iterate(func(w uint32) bool {
		n += int64(g.Degree(w))
		return true
	})
	return n
}

// BenchmarkRecount measures the full recount of all 15 orbits on the §7
// graph (wall time on all cores, and CPU time summed over them) and
// reports it as a multiple of one replayed event (delete + insert of a
// random edge, timed over the benchmark's event sample).
func BenchmarkRecount(b *testing.B) {
	g, edges := benchGraph()
	r := NewRecounter(4)
	b.ReportAllocs()
	cpu := cpuSeconds()
	for b.Loop() {
		r.Recount(g)
	}
	cpu = cpuSeconds() - cpu
	perRecount := b.Elapsed().Seconds() / float64(b.N)
	b.ReportMetric(perRecount*1e3, "ms/recount")
	b.ReportMetric(cpu*1e3/float64(b.N), "cpu-ms/recount")

	e := NewEngine(4)
	s := &sink{acc: make([]int64, g.NumNodes()*maxOrbits)}
	emit := s.emit
	start := time.Now()
	for _, uv := range edges {
		e.Delete(g, uv[0], uv[1], emit)
		g.Unlink(uv[0], uv[1])
		e.Insert(g, uv[0], uv[1], emit)
		g.Link(uv[0], uv[1])
	}
	perEvent := time.Since(start).Seconds() / float64(2*len(edges))
	b.ReportMetric(perRecount/perEvent, "recount/event")
}
