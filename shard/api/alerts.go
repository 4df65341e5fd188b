package api

import (
	"cmp"
	"encoding/json"
	"fmt"
	"maps"
	"net/http"
	"net/url"
	"slices"
	"strconv"
	"strings"

	"orbitwatch/storage"
	"orbitwatch/stream"
)

type alertsJSON struct {
	Shard  int               `json:"shard"`
	Alerts []json.RawMessage `json:"alerts"`
	// With peers (and no local=true): the shards whose alerts the list
	// holds, this one first, and why any other is missing.
	Shards []int    `json:"shards,omitempty"`
	Errors []string `json:"errors,omitempty"`
}

func (a *api) alerts(w http.ResponseWriter, r *http.Request) {
	q := r.URL.Query()
	if !queryKeys(w, q, "since", "until", "node", "rule", "verdict", "limit", "local") {
		return
	}
	local, ok := queryLocal(w, q)
	if !ok {
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
	if !local && a.hasPeers() {
		a.gatherAlerts(r, &out, limit)
	}
	writeJSON(w, http.StatusOK, out)
}

// hasPeers reports whether some other shard's API is known.
func (a *api) hasPeers() bool {
	self, _ := a.v.Shard()
	for i, p := range a.opts.Peers {
		if i != self && p != "" {
			return true
		}
	}
	return false
}

// gatherAlerts adds to out, this shard's answer, every peer's answer to
// the same query, newest first across shards as within one (by cut, then
// by id, the store's key order read backwards), and cut to limit. Each
// shard's list holds its limit newest, so the merged limit newest are
// among them. A peer that does not answer is named in out.Errors.
func (a *api) gatherAlerts(r *http.Request, out *alertsJSON, limit int) {
	q := r.URL.Query()
	q.Del("local")
	answers := make([]alertsJSON, len(a.opts.Peers))
	errs := make([]error, len(a.opts.Peers))
	a.eachPeer(func(i int, base string) {
		errs[i] = a.peerGet(r.Context(), base, "/v1/alerts", maps.Clone(q), &answers[i])
	})
	type entry struct {
		seq  uint64
		id   string
		body json.RawMessage
	}
	var all []entry
	add := func(list []json.RawMessage) {
		for _, b := range list {
			var k struct {
				Seq uint64 `json:"seq"`
				ID  string `json:"id"`
			}
			json.Unmarshal(b, &k) // a body without them sorts last
			all = append(all, entry{k.Seq, k.ID, b})
		}
	}
	add(out.Alerts)
	out.Shards = []int{out.Shard}
	for i, p := range a.opts.Peers {
		switch {
		case i == out.Shard || p == "":
		case errs[i] != nil:
			out.Errors = append(out.Errors, fmt.Sprintf("shard %d (%s): %v", i, p, errs[i]))
		case answers[i].Shard != i:
			out.Errors = append(out.Errors, fmt.Sprintf("shard %d (%s): it says it is shard %d", i, p, answers[i].Shard))
		default:
			out.Shards = append(out.Shards, i)
			add(answers[i].Alerts)
		}
	}
	slices.SortStableFunc(all, func(x, y entry) int {
		if c := cmp.Compare(y.seq, x.seq); c != 0 {
			return c
		}
		return strings.Compare(y.id, x.id)
	})
	out.Alerts = out.Alerts[:0]
	for _, e := range all[:min(len(all), limit)] {
		out.Alerts = append(out.Alerts, e.body)
	}
}

// queryLocal reads local=true|false (absent: false), answering 400 to
// another value.
func queryLocal(w http.ResponseWriter, q url.Values) (local, ok bool) {
	switch v := q.Get("local"); v {
	case "", "false":
		return false, true
	case "true":
		return true, true
	default:
		writeError(w, http.StatusBadRequest, fmt.Sprintf("local %s: want true or false", quoted(v)))
		return false, false
	}
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
