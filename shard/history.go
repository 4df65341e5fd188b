package shard

import (
	"errors"
	"fmt"

	"orbitwatch/delta"
	"orbitwatch/storage"
)

// Version is a node's orbit vector at one cut.
type Version struct {
	storage.CheckpointInfo
	Vector []uint64
}

// History returns node's vector, derived by c from st's records, at the
// retained cuts with fromSeq ≤ Seq ≤ toSeq at which its own record changed
// (its degree, triangles, cycles …; see README on what moves in between),
// and at the last retained cut of the range, oldest first, at most limit of
// them (evenly spread, the first and last kept). A node unknown at toSeq's
// cut is storage.ErrUnknownNode.
func History(st *storage.Store, c delta.Counter, node string, fromSeq, toSeq uint64, limit int) ([]Version, error) {
	x, last, err := st.NodeAt(node, toSeq)
	if err != nil {
		return nil, err
	}
	cps, err := st.RecordChanges(x, fromSeq, last.Seq)
	if err != nil {
		return nil, err
	}
	if n := len(cps); (n == 0 || cps[n-1].Seq != last.Seq) && last.Seq >= fromSeq {
		cps = append(cps, last)
	}
	var out []Version
	for _, i := range thin(len(cps), limit) {
		vec, cut, err := DeriveStored(st, c, node, cps[i].Seq)
		if errors.Is(err, storage.ErrUnknownNode) {
			continue // written at a cut where it was new: it exists from there on
		}
		if err != nil {
			return nil, err
		}
		out = append(out, Version{CheckpointInfo: cut, Vector: vec})
	}
	return out, nil
}

// thin returns at most limit indices of 0..n−1, evenly spread, the first
// and the last always among them.
func thin(n, limit int) []int {
	if n <= limit {
		out := make([]int, n)
		for i := range out {
			out[i] = i
		}
		return out
	}
	out := make([]int, 0, limit)
	if limit == 1 {
		return append(out, n-1)
	}
	for i := range limit {
		out = append(out, i*(n-1)/(limit-1))
	}
	return out
}

// StateAt loads the whole state of st's latest complete cut with Seq ≤ seq
// into an applier: the graph, the dictionary, and a counter restored from
// the cut's records (which Restore holds to the stored adjacency), with no
// window (it is for reading and for following stored cuts, Follow).
// Export, verification and whole-network measures read every node's
// vector from it.
func StateAt(st *storage.Store, c *Counting, seq uint64) (*Applier, storage.CheckpointInfo, error) {
	state, err := st.LoadAt(seq)
	if err != nil {
		return nil, storage.CheckpointInfo{}, err
	}
	src, err := st.SourceAt(state.Seq)
	if err != nil {
		return nil, storage.CheckpointInfo{}, err
	}
	defer src.Close()
	a, err := Restore(c, 0, Cuts{}, &storage.State{Seq: state.Seq, Watermark: state.Watermark, Dict: state.Dict, Graph: state.Graph}, src)
	var re *delta.RecordError
	if errors.As(err, &re) && int(re.Node) < state.Dict.Len() {
		return nil, storage.CheckpointInfo{}, fmt.Errorf("checkpoint %d: the stored record of node %q %w", state.Seq, state.Dict.Name(re.Node), re.Err)
	}
	if err != nil {
		return nil, storage.CheckpointInfo{}, err
	}
	return a, src.Checkpoint(), nil
}
