package main

import (
	"errors"
	"fmt"
	"os"

	"orbitwatch/delta"
	"orbitwatch/delta/five"
	"orbitwatch/internal/progress"
	"orbitwatch/shard"
)

func init() {
	commands["verify"] = command{"recount the latest checkpoint's graph statically and compare every vector derived from the stored records", runVerify}
}

func runVerify(args []string) int {
	c := newReadCommand("verify", false)
	if code := c.parse(args); code != 0 {
		return code
	}
	st, _, err := c.open()
	if err != nil {
		return fail("verify", err)
	}
	defer st.Close()
	set := st.Settings()
	counting, err := shard.NewCounting(set.Kind, set.MaxNodes)
	if err != nil {
		return fail("verify", err)
	}
	if counting.Catalog.NumOrbits() != set.NumOrbits {
		return fail("verify", fmt.Errorf("the store records %d orbits, the catalog for %s up to %d nodes has %d", set.NumOrbits, set.Kind, set.MaxNodes, counting.Catalog.NumOrbits()))
	}
	// One reporter while the state is loaded (its records restored and
	// held to the stored adjacency); the recount shows its own progress
	// where it takes long (five nodes).
	prog := progress.New(os.Stderr, 0, "verify", progress.WithUnit("nodes loaded"), progress.Counted())
	a, cut, err := shard.StateAt(st, counting, st.Seq())
	if err != nil {
		prog.Done()
		return fail("verify", err)
	}
	prog.Add(int64(a.Dict().Len()), 0)
	prog.Done()
	rec, err := recount(counting, a)
	var derived *delta.Vectors
	if err == nil {
		derived, err = a.Vectors()
	}
	if err == nil {
		err = compare(a.Names(), derived, rec)
	}
	if errors.Is(err, errMismatch) {
		return fail("verify", fmt.Errorf("checkpoint %d: vectors derived from the stored records differ from the recount: %w", cut.Seq, err))
	}
	if err != nil {
		return fail("verify", err)
	}
	fmt.Printf("verify: checkpoint %d (event time %s): %d nodes, %d edges, %d orbits each: every vector derived from the stored records equals the static recount\n",
		cut.Seq, formatEventTime(eventTime(cut.Watermark), "none"), a.Dict().Len(), a.Graph().NumEdges(), set.NumOrbits)
	return 0
}

// recount is c's static recount of a's graph, or an error naming the
// account whose degree is beyond what a static recount counts exactly, or
// a count that overflows. The 2–5 node recount, which takes seconds a
// million edges, reports its progress on standard error.
func recount(c *shard.Counting, a *shard.Applier) (*delta.Vectors, error) {
	if err := delta.CheckRecount(a.Graph()); err != nil {
		var de *delta.DegreeError
		if errors.As(err, &de) {
			return nil, fmt.Errorf("cannot recount: %q has %d counterparties, above the %d a static recount counts exactly", a.Dict().Name(de.Node), de.Degree, delta.MaxRecountDegree)
		}
		return nil, err
	}
	if _, ok := c.Recount.(*five.Recounter); ok {
		g := a.Graph()
		prog := progress.New(os.Stderr, five.Passes*int64(g.NumNodes()), "recount", progress.WithUnit("node passes"), progress.Counted())
		defer prog.Done()
		return five.NewRecounter(five.Options{Progress: func(done, _ int64) { prog.Add(done, 0) }}).Count(g)
	}
	return c.Recount.Recount(a.Graph()), nil
}
