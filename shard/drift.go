package shard

import (
	"errors"
	"fmt"
	"net/http"
	"time"

	"orbitwatch/delta"
	"orbitwatch/delta/catalog"
	"orbitwatch/delta/gdv"
	"orbitwatch/storage"
)

// CheckGCD11 says whether GCD-11 can be computed for cat: it needs the
// 2–4 node orbits 0–11 of the undirected catalog (Yaveroğlu et al. 2014),
// which the undirected 2–4 and 2–5 node catalogs have under the same
// numbers. The directed and signed catalogs number their orbits by the
// project's own rule, with no published non-redundant subset, and the 2–3
// node catalog lacks the 4-node orbits, so they are refused by name rather
// than given a distance of another meaning under the same name.
func CheckGCD11(cat *catalog.Catalog) error {
	if cat.Kind != delta.Undirected || cat.MaxNodes < 4 {
		return fmt.Errorf("graphlet correlation distance (GCD-11) needs the undirected orbits of 2–4 node graphlets: it works for --kind undirected with --max-nodes 4 or 5, not for %v graphlets of up to %d nodes", cat.Kind, cat.MaxNodes)
	}
	return nil
}

// ProfileAt returns the GCD-11 profile (gdv.NewProfile over
// gdv.GCD11Orbits) of every node's vector as of st's latest complete cut
// with Seq ≤ seq, and that cut. The state there is loaded whole (StateAt)
// and the vectors derived on every core; nodes without an edge at the cut
// are left out (see gdv.Profile). c's catalog must pass CheckGCD11.
func ProfileAt(st *storage.Store, c *Counting, seq uint64) (*gdv.Profile, storage.CheckpointInfo, error) {
	if err := CheckGCD11(c.Catalog); err != nil {
		return nil, storage.CheckpointInfo{}, err
	}
	a, cut, err := StateAt(st, c, seq)
	if err != nil {
		return nil, storage.CheckpointInfo{}, err
	}
	n := a.dict.Len()
	vecs := delta.NewVectors(n, c.Catalog.NumOrbits())
	err = eachChunk(n, func() func(lo, hi int) error {
		var vec []uint64
		return func(lo, hi int) error {
			for x := uint32(lo); x < uint32(hi); x++ {
				var err error
				if vec, err = a.counter.Vector(x, vec); err != nil {
					return err
				}
				copy(vecs.Row(x), vec)
			}
			return nil
		}
	})
	if err != nil {
		return nil, storage.CheckpointInfo{}, fmt.Errorf("cut %d: %w", cut.Seq, err)
	}
	p, err := gdv.NewProfile(vecs, gdv.GCD11Orbits())
	if err != nil {
		return nil, storage.CheckpointInfo{}, err
	}
	return p, cut, nil
}

// DriftPoint is one step of a drift series.
type DriftPoint struct {
	// At is the step's event time; Cut the latest cut whose watermark is
	// ≤ At, and Nodes the nodes with an edge there.
	At    time.Time
	Cut   storage.CheckpointInfo
	Nodes int
	// Previous is GCD-11 from the previous step's cut (0 at the first
	// step, and where both steps fall on one cut); First is GCD-11 from
	// the first step's cut.
	Previous, First float64
}

// SeriesError is a drift series that cannot be answered as asked: a bad
// range or step (Status 400), a step before the first cut (404) or
// before the retained history (410).
type SeriesError struct {
	Status int
	Msg    string
}

func (e *SeriesError) Error() string { return e.Msg }

// MaxDriftPoints bounds the steps of a drift series.
const MaxDriftPoints = 1000

// DriftSeries returns GCD-11 over the steps from, from+every, … ≤ to,
// each read as of the latest cut whose watermark is ≤ the step. Each
// distinct cut is profiled once (ProfileAt) and at most three profiles are
// held at once. A bad range, or a step before the first cut or the
// retained history, is a *SeriesError.
func DriftSeries(st *storage.Store, c *Counting, from, to time.Time, every time.Duration) ([]DriftPoint, error) {
	if every <= 0 || to.Before(from) {
		return nil, &SeriesError{http.StatusBadRequest, "a drift series needs a step above zero and from ≤ to"}
	}
	if steps := to.Sub(from) / every; steps >= MaxDriftPoints {
		return nil, &SeriesError{http.StatusBadRequest, fmt.Sprintf("%s to %s every %s is %d steps; at most %d", from.Format(time.RFC3339), to.Format(time.RFC3339), every, steps+1, MaxDriftPoints)}
	}
	var out []DriftPoint
	var first, prev *gdv.Profile
	for t := from; !t.After(to); t = t.Add(every) {
		seq, status, msg := CutFor(st, t, 0)
		if status != http.StatusOK {
			return nil, &SeriesError{status, fmt.Sprintf("step %s: %s", t.Format(time.RFC3339Nano), msg)}
		}
		pt := DriftPoint{At: t}
		p := prev
		if len(out) == 0 || out[len(out)-1].Cut.Seq != seq {
			var err error
			if p, pt.Cut, err = ProfileAt(st, c, seq); err != nil {
				return nil, fmt.Errorf("step %s: %w", t.Format(time.RFC3339Nano), err)
			}
		} else {
			pt.Cut = out[len(out)-1].Cut
		}
		pt.Nodes = p.Nodes
		if first == nil {
			first = p
		} else {
			dp, err := gdv.Compare(prev, p)
			if err != nil {
				return nil, err
			}
			df, err := gdv.Compare(first, p)
			if err != nil {
				return nil, err
			}
			pt.Previous, pt.First = dp.GCD, df.GCD
		}
		prev = p
		out = append(out, pt)
	}
	return out, nil
}

// Drift is what changed between two cuts of a store: their profiles and
// gdv.Compare's GCD-11, orbit pairs and per-orbit shifts.
type Drift struct {
	From, To storage.CheckpointInfo
	A, B     *gdv.Profile
	gdv.Drift
}

// DriftAt returns the Drift from the latest complete cut with Seq ≤
// fromSeq to the latest with Seq ≤ toSeq (one profile when both name the
// same cut). The two cuts are loaded and profiled at once, one per core
// (loading a state is mostly one core's work).
func DriftAt(st *storage.Store, c *Counting, fromSeq, toSeq uint64) (Drift, error) {
	var d Drift
	same := toSeq == fromSeq
	if !same {
		from, err1 := CheckpointAt(st, fromSeq)
		to, err2 := CheckpointAt(st, toSeq)
		same = err1 == nil && err2 == nil && from.Seq == to.Seq
	}
	var errB error
	done := make(chan struct{})
	go func() {
		defer close(done)
		if !same {
			d.B, d.To, errB = ProfileAt(st, c, toSeq)
		}
	}()
	var err error
	d.A, d.From, err = ProfileAt(st, c, fromSeq)
	<-done
	if err = errors.Join(err, errB); err != nil {
		return Drift{}, err
	}
	if same {
		d.B, d.To = d.A, d.From
	}
	if d.Drift, err = gdv.Compare(d.A, d.B); err != nil {
		return Drift{}, err
	}
	return d, nil
}
