package alert

import (
	"slices"
	"sort"
	"time"
)

// Case is one labelled case: an investigation that found node involved,
// known from Known on. Rows of one case share its ID; a case is alerted
// when any of its nodes is.
type Case struct {
	ID    string
	Node  string
	Known time.Time
}

// RuleMeasure is how one rule (or all rules together, Rule "all") did
// against the labels over the evaluated range.
type RuleMeasure struct {
	Rule string `json:"rule"`
	// Alerts counts the rule's alerts; PerTenKDay is that per 10,000
	// active nodes per day of event time.
	Alerts     int     `json:"alerts"`
	PerTenKDay float64 `json:"alerts_per_10k_active_nodes_per_day"`
	// OnCases counts the alerts on a node of some case, Share that as a
	// part of Alerts (0 when there are none).
	OnCases int     `json:"alerts_on_cases"`
	Share   float64 `json:"share_on_cases"`
	// Cases counts the cases, Alerted those with an alert of the rule on
	// one of their nodes.
	Cases   int `json:"cases"`
	Alerted int `json:"cases_alerted"`
	// Delays are, for each alerted case, the event time from the case
	// being known to its first alert, in hours, sorted (negative: the
	// alert came before the case was known); the median and extremes
	// are repeated for tables.
	Delays       []float64 `json:"delays_hours"`
	MedianDelay  *float64  `json:"median_delay_hours"`
	EarliestLead *float64  `json:"min_delay_hours"`
	LatestDelay  *float64  `json:"max_delay_hours"`
}

// Measurement is the report of alerts against labels.
type Measurement struct {
	From, To time.Time
	Days     float64 `json:"days"`
	Active   int     `json:"active_nodes"`
	Cases    int     `json:"cases"`
	// Rules has one entry per rule name given, in that order, then "all".
	Rules []RuleMeasure `json:"rules"`
}

// AllRules is the Rule of the measure over every rule together.
const AllRules = "all"

// Measure sets alerts against cases: per rule in rules and for all of them
// together, how many alerts, their rate per 10,000 active nodes per day
// (active nodes and days of the evaluated range given by the caller), the
// share on case nodes, how many cases were alerted and how long after
// each case was known (its earliest row) the first alert on one of its
// nodes came.
func Measure(alerts []Alert, cases []Case, rules []string, active int, days float64, from, to time.Time) Measurement {
	type caseInfo struct {
		known time.Time
		nodes []string
	}
	byID := map[string]*caseInfo{}
	var ids []string
	caseOf := map[string][]string{} // node → case ids
	for _, c := range cases {
		id := c.ID
		if id == "" {
			id = "node:" + c.Node
		}
		ci := byID[id]
		if ci == nil {
			ci = &caseInfo{known: c.Known}
			byID[id] = ci
			ids = append(ids, id)
		}
		if c.Known.Before(ci.known) {
			ci.known = c.Known
		}
		if !slices.Contains(ci.nodes, c.Node) {
			ci.nodes = append(ci.nodes, c.Node)
			caseOf[c.Node] = append(caseOf[c.Node], id)
		}
	}
	m := Measurement{From: from, To: to, Days: days, Active: active, Cases: len(ids)}
	for _, rule := range append(slices.Clone(rules), AllRules) {
		r := RuleMeasure{Rule: rule, Cases: len(ids)}
		first := map[string]time.Time{} // case id → first alert
		for _, a := range alerts {
			if rule != AllRules && a.Rule != rule {
				continue
			}
			r.Alerts++
			if len(caseOf[a.Node]) > 0 {
				r.OnCases++
			}
			for _, id := range caseOf[a.Node] {
				if t, ok := first[id]; !ok || a.EventTime.Before(t) {
					first[id] = a.EventTime
				}
			}
		}
		if r.Alerts > 0 {
			r.Share = float64(r.OnCases) / float64(r.Alerts)
		}
		if active > 0 && days > 0 {
			r.PerTenKDay = float64(r.Alerts) / (float64(active) / 1e4) / days
		}
		for _, id := range ids {
			if t, ok := first[id]; ok {
				r.Alerted++
				r.Delays = append(r.Delays, t.Sub(byID[id].known).Hours())
			}
		}
		sort.Float64s(r.Delays)
		if n := len(r.Delays); n > 0 {
			med := r.Delays[n/2]
			if n%2 == 0 {
				med = (r.Delays[n/2-1] + r.Delays[n/2]) / 2
			}
			lo, hi := r.Delays[0], r.Delays[n-1]
			r.MedianDelay, r.EarliestLead, r.LatestDelay = &med, &lo, &hi
		}
		m.Rules = append(m.Rules, r)
	}
	return m
}
