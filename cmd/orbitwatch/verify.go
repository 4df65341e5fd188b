package main

import (
	"errors"
	"fmt"
	"os"

	"orbitwatch/internal/progress"
	"orbitwatch/shard"
)

func init() {
	commands["verify"] = command{"recount the latest checkpoint's graph statically and compare every stored vector", runVerify}
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
	// The reporter's events are the phases done: loaded, recounted, compared.
	prog := progress.New(os.Stderr, 0, "verify phases")
	state, err := st.Load()
	if err != nil {
		prog.Done()
		return fail("verify", err)
	}
	prog.Add(1, 0)
	rec := counting.Recount.Recount(state.Graph)
	prog.Add(1, 0)
	names := make([]string, state.Dict.Len())
	for i := range names {
		names[i] = state.Dict.Name(uint32(i))
	}
	err = compare(names, state.Vectors, rec)
	prog.Add(1, 0)
	prog.Done()
	if errors.Is(err, errMismatch) {
		return fail("verify", fmt.Errorf("checkpoint %d: stored vectors differ from the recount: %w", state.Seq, err))
	}
	if err != nil {
		return fail("verify", err)
	}
	fmt.Printf("verify: checkpoint %d (event time %s): %d nodes, %d edges, %d orbits each: every stored vector equals the static recount\n",
		state.Seq, formatEventTime(eventTime(state.Watermark), "none"), len(names), state.Graph.NumEdges(), set.NumOrbits)
	return 0
}
