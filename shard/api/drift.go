package api

import (
	"errors"
	"fmt"
	"net/http"
	"net/url"
	"strconv"
	"strings"
	"time"

	"orbitwatch/delta/catalog"
	"orbitwatch/delta/gdv"
	"orbitwatch/shard"
	"orbitwatch/storage"
	"orbitwatch/stream"
)

// DriftJSON is the body of GET /v1/drift and what `orbitwatch drift
// --json` prints, exactly these keys: the graphlet correlation distance
// GCD11 (Yaveroğlu et al. 2014) between the orbit matrices of two cuts
// over Orbits (the GCD-11 orbits), the orbit pairs whose Spearman
// correlation moved most, and every orbit's distribution at both cuts.
type DriftJSON struct {
	Kind     string      `json:"kind"`
	MaxNodes int         `json:"max_nodes"`
	From     DriftCut    `json:"from"`
	To       DriftCut    `json:"to"`
	GCD11    float64     `json:"gcd11"`
	Orbits   []int       `json:"orbits"`
	Pairs    []DriftPair `json:"pairs"`
	Shifts   []Shift     `json:"shifts"`
}

// DriftCut is one side of a drift: the cut, the nodes with an edge there
// (the only ones profiled), and the GCD-11 orbits whose count was the
// same at all of them (their correlations are taken as 0; see
// gdv.NewProfile).
type DriftCut struct {
	Seq       uint64     `json:"seq"`
	EventTime *time.Time `json:"event_time"`
	Nodes     int        `json:"nodes"`
	Constant  []int      `json:"constant"`
}

// DriftPair is the Spearman correlation of two orbits across nodes at
// both cuts.
type DriftPair struct {
	Orbits [2]int  `json:"orbits"`
	Before float64 `json:"before"`
	After  float64 `json:"after"`
}

// Shift is one orbit's counts at both cuts and the two-sample
// Kolmogorov–Smirnov statistic between them.
type Shift struct {
	Orbit  int      `json:"orbit"`
	Name   string   `json:"name"`
	KS     float64  `json:"ks"`
	Before Quantile `json:"before"`
	After  Quantile `json:"after"`
}

// Quantile describes one orbit's counts over the nodes of a cut: the share
// of nodes with a non-zero count, empirical quantiles and the largest.
type Quantile struct {
	NonZero float64 `json:"nonzero"`
	P50     float64 `json:"p50"`
	P90     float64 `json:"p90"`
	P99     float64 `json:"p99"`
	Max     float64 `json:"max"`
}

// DriftPairs is how many orbit pairs a drift lists (of 55 for GCD-11).
const DriftPairs = 10

// NewDriftJSON returns the body for d, orbits named from cat.
func NewDriftJSON(d shard.Drift, cat *catalog.Catalog) DriftJSON {
	side := func(c storage.CheckpointInfo, p *gdv.Profile) DriftCut {
		out := DriftCut{Seq: c.Seq, EventTime: optTime(c.Watermark), Nodes: p.Nodes, Constant: []int{}}
		for j, flat := range p.Constant {
			if flat {
				out.Constant = append(out.Constant, p.Orbits[j])
			}
		}
		return out
	}
	out := DriftJSON{Kind: cat.Kind.String(), MaxNodes: cat.MaxNodes, From: side(d.From, d.A), To: side(d.To, d.B),
		GCD11: d.GCD, Orbits: d.A.Orbits, Pairs: []DriftPair{}, Shifts: make([]Shift, len(d.Shifts))}
	for _, p := range d.Pairs[:min(DriftPairs, len(d.Pairs))] {
		out.Pairs = append(out.Pairs, DriftPair{Orbits: [2]int{p.A, p.B}, Before: p.Before, After: p.After})
	}
	q := func(x gdv.Dist) Quantile { return Quantile{x.NonZero, x.P50, x.P90, x.P99, x.Max} }
	for i, s := range d.Shifts {
		out.Shifts[i] = Shift{Orbit: s.Orbit, Name: cat.Orbits[s.Orbit].Name, KS: s.KS, Before: q(s.Before), After: q(s.After)}
	}
	return out
}

// DriftSeriesJSON is the body of GET /v1/drift/series and what
// `orbitwatch drift --every --json` prints: GCD-11 at every step.
type DriftSeriesJSON struct {
	Kind     string       `json:"kind"`
	MaxNodes int          `json:"max_nodes"`
	Every    string       `json:"every"`
	Points   []DriftPoint `json:"points"`
}

// DriftPoint is one step: its time, the cut read there, the nodes
// profiled, and GCD-11 from the previous step's cut and from the first's.
type DriftPoint struct {
	At            time.Time  `json:"at"`
	Seq           uint64     `json:"seq"`
	EventTime     *time.Time `json:"event_time"`
	Nodes         int        `json:"nodes"`
	GCD11Previous float64    `json:"gcd11_previous"`
	GCD11First    float64    `json:"gcd11_first"`
}

// NewDriftSeriesJSON returns the body for the points of a series.
func NewDriftSeriesJSON(pts []shard.DriftPoint, every time.Duration, cat *catalog.Catalog) DriftSeriesJSON {
	out := DriftSeriesJSON{Kind: cat.Kind.String(), MaxNodes: cat.MaxNodes, Every: FormatSpan(every), Points: make([]DriftPoint, len(pts))}
	for i, p := range pts {
		out.Points[i] = DriftPoint{At: p.At.UTC(), Seq: p.Cut.Seq, EventTime: optTime(p.Cut.Watermark), Nodes: p.Nodes, GCD11Previous: p.Previous, GCD11First: p.First}
	}
	return out
}

// FormatSpan writes a span as stream.ParseSpan reads it back: whole days
// as "1d", else Go's form without zero minutes or seconds ("12h", "1h30m").
func FormatSpan(d time.Duration) string {
	if d > 0 && d%(24*time.Hour) == 0 {
		return strconv.FormatInt(int64(d/(24*time.Hour)), 10) + "d"
	}
	s := d.String()
	if strings.HasSuffix(s, "m0s") {
		s = strings.TrimSuffix(s, "0s")
	}
	if strings.HasSuffix(s, "h0m") {
		s = strings.TrimSuffix(s, "0m")
	}
	return s
}

// storedCuts returns st's complete cuts, answering 404 when there is none
// yet.
func storedCuts(w http.ResponseWriter, st *storage.Store) ([]storage.CheckpointInfo, bool) {
	cps := st.Checkpoints()
	if len(cps) == 0 {
		writeError(w, http.StatusNotFound, "no complete cut in the store yet")
	}
	return cps, len(cps) > 0
}

// drift answers GET /v1/drift?from=TIME&to=TIME (or from_seq, to_seq):
// the drift between the cuts they name, by default the first and the
// last stored.
func (a *api) drift(w http.ResponseWriter, r *http.Request) {
	q := r.URL.Query()
	if !queryKeys(w, q, "from", "to", "from_seq", "to_seq") || !a.gcd11(w) {
		return
	}
	st := a.v.Store()
	cps, ok := storedCuts(w, st)
	if !ok {
		return
	}
	from, ok := a.cutParam(w, q, "from", cps[0].Seq)
	if !ok {
		return
	}
	to, ok := a.cutParam(w, q, "to", cps[len(cps)-1].Seq)
	if !ok {
		return
	}
	for _, seq := range []uint64{from, to} {
		if _, err := shard.CheckpointAt(st, seq); err != nil {
			status, msg := shard.StoredError(st, seq, err)
			writeError(w, status, msg)
			return
		}
	}
	d, err := shard.DriftAt(st, a.v.Counting(), from, to)
	if err != nil {
		a.internal(w, "the drift", err)
		return
	}
	writeJSON(w, http.StatusOK, NewDriftJSON(d, a.v.Counting().Catalog))
}

// driftSeries answers GET /v1/drift/series?every=SPAN[&from=TIME&to=TIME]:
// GCD-11 at every step, by default from the first stored cut's event
// time to the last's.
func (a *api) driftSeries(w http.ResponseWriter, r *http.Request) {
	q := r.URL.Query()
	if !queryKeys(w, q, "from", "to", "every") || !a.gcd11(w) {
		return
	}
	every, err := stream.ParseSpan(q.Get("every"))
	if err != nil || every == 0 {
		writeError(w, http.StatusBadRequest, fmt.Sprintf("every %s: want a span such as 1d or 6h", quoted(q.Get("every"))))
		return
	}
	st := a.v.Store()
	cps, ok := storedCuts(w, st)
	if !ok {
		return
	}
	bound := [2]time.Time{cps[0].Watermark, cps[len(cps)-1].Watermark}
	for i, k := range []string{"from", "to"} {
		if q.Has(k) {
			if bound[i], err = stream.ParseTime(q.Get(k)); err != nil {
				writeError(w, http.StatusBadRequest, timeError(k, q.Get(k), err))
				return
			}
		}
	}
	if bound[0].IsZero() || bound[1].IsZero() {
		writeError(w, http.StatusBadRequest, "the stored cuts carry no event time: a series needs from and to")
		return
	}
	pts, err := shard.DriftSeries(st, a.v.Counting(), bound[0], bound[1], every)
	var bad *shard.SeriesError
	if errors.As(err, &bad) {
		writeError(w, bad.Status, bad.Msg)
		return
	}
	if err != nil {
		a.internal(w, "the drift series", err)
		return
	}
	writeJSON(w, http.StatusOK, NewDriftSeriesJSON(pts, every, a.v.Counting().Catalog))
}

// gcd11 answers 501 naming the kinds GCD-11 works for when the worker
// counts another.
func (a *api) gcd11(w http.ResponseWriter) bool {
	if err := shard.CheckGCD11(a.v.Counting().Catalog); err != nil {
		writeError(w, http.StatusNotImplemented, err.Error())
		return false
	}
	return true
}

// cutParam reads ?KEY=TIME or ?KEY_seq=N as the sequence of a cut (the
// latest cut at or before it); def without either.
func (a *api) cutParam(w http.ResponseWriter, q url.Values, key string, def uint64) (uint64, bool) {
	ks := key + "_seq"
	switch {
	case q.Has(key) && q.Has(ks):
		writeError(w, http.StatusBadRequest, fmt.Sprintf("give %s or %s, not both", key, ks))
		return 0, false
	case q.Has(ks):
		seq, err := strconv.ParseUint(q.Get(ks), 10, 64)
		if err != nil || seq == 0 {
			writeError(w, http.StatusBadRequest, fmt.Sprintf("%s %s: want a log sequence number ≥ 1", ks, quoted(q.Get(ks))))
			return 0, false
		}
		return seq, true
	case q.Has(key):
		t, err := stream.ParseTime(q.Get(key))
		if err != nil {
			writeError(w, http.StatusBadRequest, timeError(key, q.Get(key), err))
			return 0, false
		}
		seq, status, msg := shard.CutFor(a.v.Store(), t, 0)
		if status != http.StatusOK {
			writeError(w, status, key+": "+msg)
			return 0, false
		}
		return seq, true
	}
	return def, true
}
