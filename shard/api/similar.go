package api

import (
	"fmt"
	"net/http"
	"net/url"
	"strconv"
	"time"

	"orbitwatch/delta/catalog"
	"orbitwatch/shard"
)

// SimilarJSON is the body of GET /v1/nodes/{id}/similar and what
// `orbitwatch similar --json` prints, exactly these keys: the nodes whose
// signatures are nearest to Node's, nearest first, at the log position
// Seq (the last applied event, or the cut read) whose event-time
// watermark is EventTime (null without one).
type SimilarJSON struct {
	Node      string            `json:"node"`
	Seq       uint64            `json:"seq"`
	EventTime *time.Time        `json:"event_time"`
	Similar   []SimilarNodeJSON `json:"similar"`
}

// SimilarNodeJSON is one near node: its GDV signature distance (in [0, 1),
// 0 for equal vectors; gdv.Metric, the distance of the signature alert
// rule), its degree, and the orbits whose terms of the distance are
// largest, largest first.
type SimilarNodeJSON struct {
	Node     string      `json:"node"`
	Distance float64     `json:"distance"`
	Degree   int         `json:"degree"`
	Orbits   []OrbitName `json:"orbits"`
}

// OrbitName is an orbit with its plain names from the catalog.
type OrbitName struct {
	Orbit    int    `json:"orbit"`
	Name     string `json:"name"`
	Graphlet string `json:"graphlet"`
}

// NewSimilarJSON returns the body of a successful reply, orbits named from
// cat.
func NewSimilarJSON(r shard.SimilarReply, cat *catalog.Catalog) SimilarJSON {
	out := SimilarJSON{Node: r.Node, Seq: r.Seq, EventTime: optTime(r.EventTime), Similar: make([]SimilarNodeJSON, len(r.Similar))}
	for i, s := range r.Similar {
		n := SimilarNodeJSON{Node: s.Node, Distance: s.Distance, Degree: s.Degree, Orbits: make([]OrbitName, len(s.Orbits))}
		for j, o := range s.Orbits {
			n.Orbits[j] = OrbitName{Orbit: o, Name: cat.Orbits[o].Name, Graphlet: cat.Graphlets[cat.Orbits[o].Graphlet].Name}
		}
		out.Similar[i] = n
	}
	return out
}

// MaxSimilar bounds k of a similar read; DefaultSimilar is k without one.
const (
	MaxSimilar     = 1000
	DefaultSimilar = 20
)

func (a *api) similar(w http.ResponseWriter, r *http.Request) {
	id, q, ok := nodeRequest(w, r, "k", "min_degree", "at", "seq")
	if !ok {
		return
	}
	req := shard.SimilarRequest{Node: id, K: DefaultSimilar, MinDegree: 1}
	if req.K, ok = queryInt(w, q, "k", DefaultSimilar, 1, MaxSimilar); !ok {
		return
	}
	if req.MinDegree, ok = queryInt(w, q, "min_degree", 1, 0, 1<<31-1); !ok {
		return
	}
	var point shard.ReadRequest
	if !asOf(w, q, &point) {
		return
	}
	req.At, req.Seq = point.At, point.Seq
	sr, ok := a.v.(shard.SimilarReader)
	if !ok {
		writeError(w, http.StatusNotImplemented, "this worker does not answer similarity queries")
		return
	}
	rep, err := sr.Similar(r.Context(), req)
	if err != nil {
		writeError(w, http.StatusServiceUnavailable, fmt.Sprintf("the nodes similar to %s were not read: %v", quoted(id), err))
		return
	}
	if !a.answered(w, rep.Shard, rep.Status, rep.Error, id, "the nodes similar to "+quoted(id)) {
		return
	}
	writeJSON(w, http.StatusOK, NewSimilarJSON(rep, a.v.Counting().Catalog))
}

// queryInt reads the whole number ?key=N in lo..hi, def when absent.
func queryInt(w http.ResponseWriter, q url.Values, key string, def, lo, hi int) (int, bool) {
	if !q.Has(key) {
		return def, true
	}
	n, err := strconv.Atoi(q.Get(key))
	if err != nil || n < lo || n > hi {
		writeError(w, http.StatusBadRequest, fmt.Sprintf("%s %s: want a whole number %d..%d", key, quoted(q.Get(key)), lo, hi))
		return 0, false
	}
	return n, true
}
