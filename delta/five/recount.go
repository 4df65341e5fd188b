package five

import (
	"errors"
	"fmt"
	"runtime"
	"sync"
	"sync/atomic"

	"orbitwatch/delta"
	"orbitwatch/delta/undirected"
)

// ErrOverflow is returned when an orbit count, or a non-induced count the
// orbit equations need, does not fit its integer type.
var ErrOverflow = errors.New("five: an orbit count exceeds 2^63−1")

// Options tune a recount.
type Options struct {
	// Workers is the number of goroutines; 0 means GOMAXPROCS.
	Workers int
	// Progress, when set, is called from the workers as work is done:
	// done more units out of total (the same total on every call). A
	// unit is one node of one of the four passes. It must be safe for
	// concurrent use.
	Progress func(done, total int64)
}

// Passes is the number of passes over the nodes a recount makes: its
// Progress total is Passes times the node count.
const Passes = 4

// Recounter is the combinatorial static recount of undirected 2–5 node
// orbits. It implements delta.Recounter.
type Recounter struct{ opt Options }

// NewRecounter returns a static recount of every node's 73 orbits.
func NewRecounter(opt Options) *Recounter { return &Recounter{opt: opt} }

// Recount implements delta.Recounter. It panics with ErrOverflow's text
// when a count does not fit (delta.Recounter has no error); Count returns
// the error instead.
func (r *Recounter) Recount(g *delta.Graph) *delta.Vectors {
	v, err := r.Count(g)
	if err != nil {
		panic(err.Error())
	}
	return v
}

// Count returns every node's orbit vector of undirected graphlets on 2–5
// nodes (catalog numbering): orbits 0–14 from delta/undirected's
// recount; the orbits of 5-node graphlets with a cycle by listing every
// induced triangle, 4-cycle and 5-cycle and the connected 5-node sets
// around it; the orbits of the three 5-node trees by counting their
// non-induced copies at each node by formula and solving the orbit
// equations (catalog.Overlap) for the induced counts. g must be
// undirected. The error is ErrOverflow, or after a bug an orbit that
// solves to a negative count.
func (r *Recounter) Count(g *delta.Graph) (*delta.Vectors, error) {
	return r.count(g, loadEquations())
}

// count is Count with the equations given, so tests can show that wrong
// coefficients are caught.
func (r *Recounter) count(g *delta.Graph, eq *equations) (*delta.Vectors, error) {
	if g.Kind() != delta.Undirected {
		panic("five: recount of a graph that is not undirected")
	}
	c := newCSR(g)
	n := c.n
	out := delta.NewVectors(n, numOrbits)
	small := undirected.NewRecounter(4).Recount(g)
	for x := range uint32(n) {
		copy(out.Row(x)[:first5], small.Row(x))
	}
	run := &pass{workers: r.opt.Workers, progress: r.opt.Progress, total: Passes * int64(n)}
	if run.workers <= 0 {
		run.workers = runtime.GOMAXPROCS(0)
	}
	ws := make([]*worker, run.workers)
	for i := range ws {
		ws[i] = newWorker(c, eq)
	}
	loc := newLocal(c)
	run.each(n, func(w int, x uint32) { loc.triangles(x) })
	run.each(n, func(w int, x uint32) { ws[w].triangleCores(x) })
	run.each(n, func(w int, x uint32) { ws[w].cycleCores(x) })
	// Sum the workers' core counts into out and divide by how often the
	// listing reaches each occurrence.
	for x := range n {
		row := out.Row(uint32(x))
		for o := first5; o < numOrbits; o++ {
			if eq.isTree[o] {
				continue
			}
			var s uint64
			for _, w := range ws {
				s += w.acc[x*num5+o-first5]
			}
			if s%eq.mult[o] != 0 {
				panic(fmt.Sprintf("five: node %d orbit %d reached %d times, not a multiple of %d", x, o, s, eq.mult[o]))
			}
			row[o] = s / eq.mult[o]
		}
	}
	loc.squares = make([]int64, n)
	for _, w := range ws {
		for x, k := range w.squares {
			loc.squares[x] = loc.ck.add(loc.squares[x], k)
		}
		w.acc, w.squares = nil, nil
	}
	loc.sums()
	if loc.ck.overflow {
		return nil, ErrOverflow
	}
	var failed atomic.Pointer[error]
	run.each(n, func(w int, x uint32) {
		if err := ws[w].trees(loc, x, out.Row(x)); err != nil {
			failed.CompareAndSwap(nil, &err)
		}
	})
	if err := failed.Load(); err != nil {
		return nil, *err
	}
	return out, nil
}

// pass runs one function over all nodes on the workers, reporting
// progress.
type pass struct {
	workers  int
	progress func(done, total int64)
	total    int64
}

// claim is how many nodes a worker takes at a time: small enough to
// spread hubs over the workers.
const claim = 32

func (p *pass) each(n int, f func(w int, x uint32)) {
	var next atomic.Int64
	var wg sync.WaitGroup
	for w := range p.workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for {
				lo := int(next.Add(claim)) - claim
				if lo >= n {
					return
				}
				hi := min(lo+claim, n)
				for x := lo; x < hi; x++ {
					f(w, uint32(x))
				}
				if p.progress != nil {
					p.progress(int64(hi-lo), p.total)
				}
			}
		}()
	}
	wg.Wait()
}
