package main

import (
	"encoding/json"
	"errors"
	"fmt"
	"os"

	"orbitwatch/delta"
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
	part, err := storedShard(state.Blobs)
	if err != nil {
		prog.Done()
		return fail("verify", err)
	}
	owned := keepOwned(part, names, state.Vectors, rec)
	err = compare(names, state.Vectors, rec)
	prog.Add(1, 0)
	prog.Done()
	if errors.Is(err, errMismatch) {
		return fail("verify", fmt.Errorf("checkpoint %d: stored vectors differ from the recount: %w", state.Seq, err))
	}
	if err != nil {
		return fail("verify", err)
	}
	nodes := fmt.Sprintf("%d nodes", len(names))
	if part.Shards > 1 {
		nodes = fmt.Sprintf("%d of %d nodes (those shard %d of %d owns)", owned, len(names), part.Shard, part.Shards)
	}
	fmt.Printf("verify: checkpoint %d (event time %s): %s, %d edges, %d orbits each: every stored vector equals the static recount\n",
		state.Seq, formatEventTime(eventTime(state.Watermark), "none"), nodes, state.Graph.NumEdges(), set.NumOrbits)
	return 0
}

// workerBlob is the blob a shard worker commits with every cut (see
// shard/worker.go); verify reads from it only which shard of how many the
// directory holds. Backfill's directories have none: one shard of one.
const workerBlob = "worker"

type shardPart struct {
	Shard  int `json:"shard"`
	Shards int `json:"shards"`
}

// storedShard reads the shard a data directory belongs to from its blobs.
func storedShard(blobs map[string][]byte) (shardPart, error) {
	b, ok := blobs[workerBlob]
	if !ok {
		return shardPart{Shard: 0, Shards: 1}, nil
	}
	var p shardPart
	if err := json.Unmarshal(b, &p); err != nil {
		return p, fmt.Errorf("stored worker record: %w", err)
	}
	if p.Shards < 1 || p.Shard < 0 || p.Shard >= p.Shards {
		return p, fmt.Errorf("stored worker record names shard %d of %d", p.Shard, p.Shards)
	}
	return p, nil
}

// keepOwned prepares rec for comparison with stored on a shard worker's
// directory: a worker keeps the full graph but only the vectors of the
// nodes it owns (shard.OwnerOf), so the recount rows of the other nodes
// are replaced by their stored rows and take no part in the check. It
// returns the number of nodes checked.
func keepOwned(p shardPart, names []string, stored, rec *delta.Vectors) int {
	if p.Shards == 1 {
		return len(names)
	}
	owned := 0
	for x, name := range names {
		if shard.OwnerOf(name, p.Shards) == p.Shard {
			owned++
			continue
		}
		for o := 0; o < stored.NumOrbits(); o++ {
			rec.Set(uint32(x), o, stored.Get(uint32(x), o))
		}
	}
	return owned
}
