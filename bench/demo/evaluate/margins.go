package evaluate

import (
	"fmt"
	"time"

	"orbitwatch/bench/demo"
	"orbitwatch/shard"
	"orbitwatch/shard/alert"
	"orbitwatch/storage"
)

// Margin is how close the background came to one orbit rule: the highest
// score and count over every background node (outside every pattern, or
// in a quiet one) whose record a cut touched, at every cut from one
// look-back after the scenario's start (before that the rules are
// primed). The degree and total-count gates are not applied, so the
// figures are at least what the rule saw.
type Margin struct {
	Rule alert.Rule
	// Score is the highest score of a node whose count passed the rule's
	// MinCount (HasScore false: none did), at Node and At.
	Score    float64
	HasScore bool
	Node     string
	At       time.Time
	// Count is the highest count of the rule (its orbit plus With) on any
	// background node, at CountNode.
	Count     float64
	CountNode string
}

// Margins replays sc through an applier counting with counting, cutting
// every every of event time, and returns the margin of every orbit rule of
// ac. A growth rule's baseline is the node's count at its latest touched
// cut a look-back back (0 when none): the evaluator's baseline whenever
// the count changes only with the node's own record, as the counts of
// alert.DirectedRules and alert.SignedRules do (their payers, payees and
// triangles are the node's own).
func Margins(sc *demo.Scenario, counting *shard.Counting, ac alert.Config, every time.Duration) ([]Margin, error) {
	type point struct {
		at time.Time
		c  float64
	}
	var out []Margin
	for _, r := range ac.Rules {
		if r.Kind != alert.Signature {
			out = append(out, Margin{Rule: r})
		}
	}
	past := make([]map[uint32][]point, len(out))
	for i := range past {
		past[i] = map[uint32][]point{}
	}
	from := sc.Config.Start.Add(ac.Lookback)
	ap := shard.NewApplier(counting, 0, shard.Cuts{Every: every})
	var vec []uint64
	ap.OnCut = func(cp *storage.Checkpoint) error {
		for _, rec := range cp.Records {
			var err error
			if vec, err = ap.Vector(rec.Node, vec); err != nil {
				return err
			}
			name := ap.Names()[rec.Node]
			m := sc.Member(name)
			if m != "" && !sc.Pattern(m).Quiet {
				continue
			}
			for i := range out {
				mg := &out[i]
				c := count(vec, mg.Rule)
				var score float64
				switch mg.Rule.Kind {
				case alert.OrbitCount:
					score = c
				case alert.OrbitGrowth:
					base := 0.0
					h := past[i][rec.Node]
					for j := len(h) - 1; j >= 0; j-- {
						if !h[j].at.After(cp.Watermark.Add(-ac.Lookback)) {
							base = h[j].c
							break
						}
					}
					past[i][rec.Node] = append(h, point{cp.Watermark, c})
					score = c / max(base, 1)
				case alert.OrbitShare:
					if sum := c + weights(vec, mg.Rule.Against); sum > 0 {
						score = c / sum
					}
				}
				if cp.Watermark.Before(from) {
					continue
				}
				if c > mg.Count {
					mg.Count, mg.CountNode = c, name
				}
				if c >= float64(mg.Rule.MinCount) && (!mg.HasScore || score > mg.Score) {
					mg.Score, mg.HasScore, mg.Node, mg.At = score, true, name, cp.Watermark
				}
			}
		}
		return nil
	}
	for i, ev := range sc.Events {
		if err := ap.Apply(uint64(i+1), ev); err != nil {
			return nil, fmt.Errorf("event %d: %w", i+1, err)
		}
	}
	return out, nil
}

// count returns r's count of v: its orbit plus the weighted With orbits.
func count(v []uint64, r alert.Rule) float64 { return float64(v[r.Orbit]) + weights(v, r.With) }

func weights(v []uint64, ws []alert.OrbitWeight) float64 {
	s := 0.0
	for _, w := range ws {
		s += w.Weight * float64(v[w.Orbit])
	}
	return s
}
