package api

import (
	"encoding/json"
	"fmt"
	"net/http"
	"slices"
	"strconv"
	"strings"

	"orbitwatch/storage"
	"orbitwatch/stream"
)

type alertsJSON struct {
	Shard  int               `json:"shard"`
	Alerts []json.RawMessage `json:"alerts"`
}

func (a *api) alerts(w http.ResponseWriter, r *http.Request) {
	q := r.URL.Query()
	if !queryKeys(w, q, "since", "until", "node", "rule", "verdict", "limit") {
		return
	}
	limit, ok := queryLimit(w, q, 100, 1000)
	if !ok {
		return
	}
	f := storage.AlertFilter{Node: q.Get("node"), Rule: q.Get("rule"), Limit: limit, Newest: true}
	if q.Has("since") {
		s := q.Get("since")
		// A whole number is a cut sequence; a Unix time must be
		// written as RFC 3339 here.
		if n, err := strconv.ParseUint(s, 10, 64); err == nil {
			f.SinceSeq = n
		} else if t, err := stream.ParseTime(s); err == nil {
			f.SinceTime = t
		} else {
			writeError(w, http.StatusBadRequest, fmt.Sprintf("since %s: want a cut sequence number or a time", quoted(s)))
			return
		}
	}
	if q.Has("until") {
		t, err := stream.ParseTime(q.Get("until"))
		if err != nil {
			writeError(w, http.StatusBadRequest, timeError("until", q.Get("until"), err))
			return
		}
		f.UntilTime = t
	}
	verdict := q.Get("verdict")
	if q.Has("verdict") && verdict != verdictNone && !slices.Contains(storage.VerdictNames, verdict) {
		writeError(w, http.StatusBadRequest, fmt.Sprintf("verdict %s: want one of %s", quoted(verdict), verdictChoices()))
		return
	}
	if q.Has("rule") {
		known, err := a.knownRule(f.Rule)
		if err != nil {
			a.internal(w, "alerts", err)
			return
		}
		if !known {
			writeError(w, http.StatusBadRequest, a.unknownRule(f.Rule))
			return
		}
	}
	st := a.v.Store()
	vs, err := st.Verdicts()
	if err != nil {
		a.internal(w, "verdicts", err)
		return
	}
	var recs []storage.AlertRecord
	switch {
	case verdict == verdictNone:
		recs, err = a.untriaged(f, vs)
	case verdict != "":
		recs, err = a.triaged(f, verdict, vs)
	default:
		recs, err = st.Alerts(f)
	}
	if err != nil {
		a.internal(w, "alerts", err)
		return
	}
	self, _ := a.v.Shard()
	out := alertsJSON{Shard: self, Alerts: make([]json.RawMessage, len(recs))}
	for i, rec := range recs {
		var t *triageJSON
		if v, ok := vs[rec.ID]; ok {
			t = triageOf(v)
		}
		out.Alerts[i] = withTriage(rec.Body, t)
	}
	writeJSON(w, http.StatusOK, out)
}

// knownRule reports whether rule is in force or the rule of a stored
// alert (one raised under an earlier set of rules stays searchable).
func (a *api) knownRule(rule string) (bool, error) {
	if slices.Contains(a.opts.Rules, rule) {
		return true, nil
	}
	recs, err := a.v.Store().Alerts(storage.AlertFilter{Rule: rule, Limit: 1})
	return len(recs) > 0, err
}

func (a *api) unknownRule(rule string) string {
	if len(a.opts.Rules) == 0 {
		return fmt.Sprintf("unknown rule %s: no alert rules are in force and no stored alert has it", quoted(rule))
	}
	names := slices.Sorted(slices.Values(a.opts.Rules))
	return fmt.Sprintf("unknown rule %s: the rules are %s", quoted(rule), strings.Join(names, ", "))
}

// orbitJSON is one orbit of the catalog: its names, and its graphlet's
// name, size, tie count and negative tie count (the sign pattern the page
// groups signed orbits by; 0 for unsigned kinds).
type orbitJSON struct {
	ID           int    `json:"id"`
	Name         string `json:"name"`
	Short        string `json:"short"`
	Graphlet     string `json:"graphlet"`
	Nodes        int    `json:"nodes"`
	Ties         int    `json:"ties"`
	NegativeTies int    `json:"negative_ties"`
}

func (a *api) catalog(w http.ResponseWriter, r *http.Request) {
	cat := a.v.Counting().Catalog
	out := struct {
		Kind     string      `json:"kind"`
		MaxNodes int         `json:"max_nodes"`
		Orbits   []orbitJSON `json:"orbits"`
	}{Kind: a.kind, MaxNodes: a.maxNodes}
	for _, o := range cat.Orbits {
		g := &cat.Graphlets[o.Graphlet]
		neg := 0
		for _, n := range g.Neg {
			if n {
				neg++
			}
		}
		out.Orbits = append(out.Orbits, orbitJSON{ID: o.ID, Name: o.Name, Short: o.Short, Graphlet: g.Name, Nodes: g.Nodes, Ties: len(g.Edges), NegativeTies: neg})
	}
	writeJSON(w, http.StatusOK, out)
}
