package alert

import (
	"fmt"
	"os"
	"strconv"
	"strings"
	"time"

	"gopkg.in/yaml.v3"

	"orbitwatch/delta/catalog"
)

// LoadConfig reads a rules file (see ParseConfig); errors name the file
// and the line.
func LoadConfig(path string, cat *catalog.Catalog) (Config, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return Config{}, err
	}
	cfg, err := ParseConfig(b, cat)
	if err != nil {
		return Config{}, fmt.Errorf("%s: %w", path, err)
	}
	return cfg, nil
}

// ParseConfig reads rules from YAML:
//
//	baseline: lookback        # or decayed
//	lookback: 6h              # Go duration; for baseline: lookback
//	half_life: 6h             # for baseline: decayed
//	sweep: 24h                # score every node once per 24h of event time (default: off)
//	max_per_minute: 60        # 0: no cap
//	top_orbits: 5
//	defaults:                 # gates every rule gets unless it sets its own
//	  min_degree: 3
//	  min_total: 10
//	  cooldown: 1h
//	rules:
//	  - name: fan-out
//	    kind: orbit-growth      # signature | orbit-count | orbit-growth | orbit-share
//	    orbit: centre of 3-star # orbit id or catalog orbit name
//	    fire: 8
//	    rearm: 3                # default 0.7 × fire
//	    min_count: 200
//	  - name: ring
//	    kind: orbit-share       # share of orbit among orbit + Σ weight·against
//	    orbit: 4-cycle
//	    against:                # orbit: weight, or a list of orbits (weight 1)
//	      end of 4-path: 0.5
//	      tail end of tailed triangle: 1
//	      degree-2 node of diamond: 1
//	    fire: 0.5               # in (0, 1]
//	    min_count: 8
//	  - name: fan-in
//	    kind: orbit-growth
//	    orbit: centre of an in-star with 2 payers
//	    with:                   # orbits whose counts add to orbit's: a list
//	      - paid by A and B; A pays B   # (weight 1) or a mapping to weights
//	      - paid by A and B; A two-way with B
//	    fire: 8
//	    min_count: 200
//
// Every key is optional; omitted settings take the DefaultConfig values,
// and without a rules list the default rules of cat apply. An unknown key,
// a value of the wrong type, an orbit the catalog does not have or a level
// out of range is an error naming the line.
func ParseConfig(data []byte, cat *catalog.Catalog) (Config, error) {
	cfg := DefaultConfig(cat)
	var doc yaml.Node
	if err := yaml.Unmarshal(data, &doc); err != nil {
		return Config{}, err // yaml.v3 errors already say "line N: …"
	}
	if len(doc.Content) == 0 {
		return cfg, nil
	}
	root := doc.Content[0]
	p := &parser{cat: cat, lines: map[string]int{}}
	gates := Rule{MinDegree: DefaultMinDegree, MinTotal: DefaultMinTotal, Cooldown: DefaultCooldown}
	var rulesNode *yaml.Node
	err := p.mapping(root, "", func(key string, v *yaml.Node) error {
		switch key {
		case "baseline":
			switch v.Value {
			case "lookback":
				cfg.Baseline = BaselineLookback
			case "decayed":
				cfg.Baseline = BaselineDecayed
			default:
				return lineErr(v, "baseline %q is not lookback or decayed", v.Value)
			}
		case "lookback":
			return p.duration(v, &cfg.Lookback)
		case "half_life":
			return p.duration(v, &cfg.HalfLife)
		case "sweep":
			return p.duration(v, &cfg.Sweep)
		case "max_per_minute":
			return p.integer(v, &cfg.MaxPerMinute)
		case "top_orbits":
			return p.integer(v, &cfg.TopOrbits)
		case "defaults":
			return p.mapping(v, "defaults", func(k string, v *yaml.Node) error {
				return p.gate(k, v, &gates)
			})
		case "rules":
			rulesNode = v
		default:
			return lineErr(v, "unknown key %q", key)
		}
		return nil
	})
	if err != nil {
		return Config{}, err
	}
	if rulesNode != nil {
		if cfg.Rules, err = p.rules(rulesNode, gates); err != nil {
			return Config{}, err
		}
	} else {
		for i := range cfg.Rules {
			cfg.Rules[i].MinDegree, cfg.Rules[i].MinTotal, cfg.Rules[i].Cooldown = gates.MinDegree, gates.MinTotal, gates.Cooldown
		}
	}
	if i, key, msg := cfg.check(cat); msg != "" {
		line := p.lines[key]
		if i >= 0 {
			line = p.lines[fmt.Sprintf("%d.%s", i, key)]
			if line == 0 {
				line = p.lines[strconv.Itoa(i)]
			}
		}
		if line == 0 {
			line = root.Line
		}
		return Config{}, fmt.Errorf("line %d: %s", line, msg)
	}
	return cfg, nil
}

// parser remembers the line of every key it read, so that a check made
// after decoding can still name a line: lines["lookback"], lines["2.fire"]
// (key of rule 2), lines["2"] (rule 2 itself).
type parser struct {
	cat   *catalog.Catalog
	lines map[string]int
}

func lineErr(n *yaml.Node, format string, args ...any) error {
	return fmt.Errorf("line %d: %s", n.Line, fmt.Sprintf(format, args...))
}

// mapping calls fn for every key of a mapping node, refusing duplicate keys
// and anything but a mapping; prefix qualifies the recorded key lines.
func (p *parser) mapping(n *yaml.Node, prefix string, fn func(key string, v *yaml.Node) error) error {
	if n.Kind != yaml.MappingNode {
		what := "the file"
		if prefix != "" {
			what = prefix
		}
		return lineErr(n, "%s must be a mapping of keys to values", what)
	}
	seen := map[string]bool{}
	for i := 0; i+1 < len(n.Content); i += 2 {
		k, v := n.Content[i], n.Content[i+1]
		if seen[k.Value] {
			return lineErr(k, "key %q given twice", k.Value)
		}
		seen[k.Value] = true
		name := k.Value
		if prefix != "" {
			name = prefix + "." + k.Value
		}
		p.lines[name] = k.Line
		if err := fn(k.Value, v); err != nil {
			return err
		}
	}
	return nil
}

func (p *parser) scalar(n *yaml.Node) error {
	if n.Kind != yaml.ScalarNode {
		return lineErr(n, "expected a single value, not a list or mapping")
	}
	return nil
}

func (p *parser) duration(n *yaml.Node, d *time.Duration) error {
	if err := p.scalar(n); err != nil {
		return err
	}
	v, err := time.ParseDuration(n.Value)
	if err != nil {
		return lineErr(n, "%q is not a duration such as 90s, 15m or 6h", n.Value)
	}
	*d = v
	return nil
}

func (p *parser) integer(n *yaml.Node, x *int) error {
	return scalarAs(p, n, x, strconv.Atoi, "a whole number")
}

func (p *parser) count(n *yaml.Node, x *uint64) error {
	return scalarAs(p, n, x, func(s string) (uint64, error) { return strconv.ParseUint(s, 10, 64) }, "a count (a whole number ≥ 0)")
}

func (p *parser) number(n *yaml.Node, x *float64) error {
	return scalarAs(p, n, x, func(s string) (float64, error) { return strconv.ParseFloat(s, 64) }, "a number")
}

// scalarAs parses a scalar node into *x, or names the line and what was
// expected.
func scalarAs[T any](p *parser, n *yaml.Node, x *T, parse func(string) (T, error), what string) error {
	if err := p.scalar(n); err != nil {
		return err
	}
	v, err := parse(n.Value)
	if err != nil {
		return lineErr(n, "%q is not %s", n.Value, what)
	}
	*x = v
	return nil
}

// gate reads one of the gate keys shared by defaults and rules.
func (p *parser) gate(key string, v *yaml.Node, r *Rule) error {
	switch key {
	case "min_degree":
		return p.integer(v, &r.MinDegree)
	case "min_total":
		return p.count(v, &r.MinTotal)
	case "cooldown":
		return p.duration(v, &r.Cooldown)
	}
	return lineErr(v, "unknown key %q", key)
}

func (p *parser) rules(n *yaml.Node, gates Rule) ([]Rule, error) {
	if n.Kind != yaml.SequenceNode {
		return nil, lineErr(n, "rules must be a list")
	}
	if len(n.Content) == 0 {
		return nil, lineErr(n, "rules is an empty list")
	}
	out := make([]Rule, len(n.Content))
	for i, rn := range n.Content {
		r := Rule{MinDegree: gates.MinDegree, MinTotal: gates.MinTotal, Cooldown: gates.Cooldown, Rearm: -1}
		p.lines[strconv.Itoa(i)] = rn.Line
		var haveKind bool
		err := p.mapping(rn, strconv.Itoa(i), func(key string, v *yaml.Node) error {
			switch key {
			case "name":
				if err := p.scalar(v); err != nil {
					return err
				}
				r.Name = v.Value
			case "kind":
				haveKind = true
				k := -1
				for j, name := range kindNames {
					if v.Kind == yaml.ScalarNode && name == v.Value {
						k = j
					}
				}
				if k < 0 {
					return lineErr(v, "kind %q is not one of %s", v.Value, strings.Join(kindNames, ", "))
				}
				r.Kind = RuleKind(k)
			case "orbit":
				return p.orbit(v, &r.Orbit)
			case "fire":
				return p.number(v, &r.Fire)
			case "rearm":
				return p.number(v, &r.Rearm)
			case "min_count":
				return p.count(v, &r.MinCount)
			case "against":
				return p.weights(v, "against", &r.Against)
			case "with":
				return p.weights(v, "with", &r.With)
			default:
				return p.gate(key, v, &r)
			}
			return nil
		})
		if err != nil {
			return nil, err
		}
		if !haveKind {
			return nil, lineErr(rn, "rule has no kind (%s)", strings.Join(kindNames, ", "))
		}
		if _, ok := p.lines[strconv.Itoa(i)+".fire"]; !ok {
			return nil, lineErr(rn, "rule %q has no fire level", r.Name)
		}
		if _, ok := p.lines[strconv.Itoa(i)+".orbit"]; !ok && r.Kind != Signature {
			return nil, lineErr(rn, "%s rule %q has no orbit", r.Kind, r.Name)
		}
		if _, ok := p.lines[strconv.Itoa(i)+".against"]; !ok && r.Kind == OrbitShare {
			return nil, lineErr(rn, "orbit-share rule %q has no against orbits", r.Name)
		}
		if r.Rearm == -1 {
			r.Rearm = DefaultRearmShare * r.Fire
		}
		out[i] = r
	}
	return out, nil
}

// weights reads the weighted orbits of a rule's key (against, with): a
// list of orbits (each of weight 1) or a mapping of orbits to weights.
func (p *parser) weights(n *yaml.Node, key string, out *[]OrbitWeight) error {
	switch n.Kind {
	case yaml.SequenceNode:
		if len(n.Content) == 0 {
			return lineErr(n, "%s is an empty list", key)
		}
		for _, on := range n.Content {
			w := OrbitWeight{Weight: 1}
			if err := p.orbit(on, &w.Orbit); err != nil {
				return err
			}
			*out = append(*out, w)
		}
	case yaml.MappingNode:
		if len(n.Content) == 0 {
			return lineErr(n, "%s is an empty mapping", key)
		}
		for i := 0; i+1 < len(n.Content); i += 2 {
			var w OrbitWeight
			if err := p.orbit(n.Content[i], &w.Orbit); err != nil {
				return err
			}
			if err := p.number(n.Content[i+1], &w.Weight); err != nil {
				return err
			}
			*out = append(*out, w)
		}
	default:
		return lineErr(n, "%s must be a list of orbits or a mapping of orbits to weights", key)
	}
	return nil
}

// orbit reads an orbit id or a catalog orbit name.
func (p *parser) orbit(n *yaml.Node, o *int) error {
	if err := p.scalar(n); err != nil {
		return err
	}
	if id, err := strconv.Atoi(n.Value); err == nil {
		if id < 0 || id >= p.cat.NumOrbits() {
			return lineErr(n, "orbit %d out of range 0..%d", id, p.cat.NumOrbits()-1)
		}
		*o = id
		return nil
	}
	id, ok := orbitByName(p.cat, n.Value)
	if !ok {
		return lineErr(n, "no orbit named %q in the %v catalog on up to %d nodes", n.Value, p.cat.Kind, p.cat.MaxNodes)
	}
	*o = id
	return nil
}
