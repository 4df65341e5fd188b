package alert_test

import (
	"os"
	"path/filepath"
	"reflect"
	"regexp"
	"strings"
	"testing"
	"time"

	"orbitwatch/delta"
	"orbitwatch/delta/catalog"
	"orbitwatch/shard/alert"
)

func TestLoadConfigFile(t *testing.T) {
	cat := undirected4(t)
	got, err := alert.LoadConfig("testdata/rules.yaml", cat)
	if err != nil {
		t.Fatal(err)
	}
	share := alert.DefaultRearmShare // at run time, as the parser multiplies
	want := alert.Config{
		Baseline: alert.BaselineDecayed, Lookback: alert.DefaultLookback, HalfLife: 90 * time.Minute,
		MaxPerMinute: 20, TopOrbits: 4,
		Rules: []alert.Rule{
			{Name: "signature-shift", Kind: alert.Signature, Fire: 0.4, Rearm: share * 0.4, MinDegree: 4, MinTotal: alert.DefaultMinTotal, Cooldown: 30 * time.Minute},
			{Name: "fan-out", Kind: alert.OrbitGrowth, Orbit: 7, Fire: 6, Rearm: 2, MinDegree: 4, MinTotal: alert.DefaultMinTotal, MinCount: 150, Cooldown: 30 * time.Minute},
			{Name: "ring", Kind: alert.OrbitCount, Orbit: 8, Fire: 6, Rearm: share * 6, MinDegree: 2, MinTotal: alert.DefaultMinTotal, Cooldown: 2 * time.Hour},
		},
	}
	if !reflect.DeepEqual(got, want) {
		t.Fatalf("config\n got %+v\nwant %+v", got, want)
	}
	alert.New(got, cat) // valid: must not panic
}

func TestEmptyConfigIsDefault(t *testing.T) {
	for _, c := range []struct {
		kind delta.Kind
		k    int
	}{{delta.Undirected, 4}, {delta.Undirected, 5}, {delta.Directed, 3}, {delta.Directed, 4}, {delta.Signed, 3}, {delta.Signed, 4}} {
		cat, err := catalog.New(c.kind, c.k)
		if err != nil {
			t.Fatal(err)
		}
		for _, text := range []string{"", "# nothing here\n"} {
			got, err := alert.ParseConfig([]byte(text), cat)
			if err != nil {
				t.Fatal(err)
			}
			if !reflect.DeepEqual(got, alert.DefaultConfig(cat)) {
				t.Fatalf("%v %d: empty config %+v is not the default", c.kind, c.k, got)
			}
			alert.New(got, cat)
		}
		rules := len(alert.DefaultConfig(cat).Rules)
		// The signature shift and the kind's orbit rules (DirectedRules,
		// SignedRules).
		if want := map[delta.Kind]int{delta.Undirected: 4, delta.Directed: 5, delta.Signed: 4}[c.kind]; rules != want {
			t.Fatalf("%v %d: %d default rules, want %d", c.kind, c.k, rules, want)
		}
	}
}

func TestBadConfigNamesTheLine(t *testing.T) {
	cat := undirected4(t)
	cases := []struct {
		name, text, want string
	}{
		{"unknown top-level key", "baseline: lookback\nlookbak: 2h\n", "line 2: unknown key \"lookbak\""},
		{"bad baseline", "\nbaseline: yesterday\n", "line 2: baseline \"yesterday\" is not lookback or decayed"},
		{"bad duration", "lookback: 2 hours\n", `line 1: "2 hours" is not a duration`},
		{"zero lookback", "max_per_minute: 5\nlookback: 0s\n", "line 2: lookback must be positive"},
		{"negative cap", "max_per_minute: -1\n", "line 1: max_per_minute must not be negative"},
		{"top orbits out of range", "top_orbits: 99\n", "line 1: top_orbits must be 1..15"},
		{"not a mapping", "- a\n- b\n", "line 1: the file must be a mapping"},
		{"unknown defaults key", "defaults:\n  min_degre: 3\n", "line 2: unknown key \"min_degre\""},
		{"rules not a list", "rules: 3\n", "line 1: rules must be a list"},
		{"empty rules", "rules: []\n", "line 1: rules is an empty list"},
		{"unknown rule key", "rules:\n  - name: a\n    kind: signature\n    fire: 0.5\n    treshold: 3\n", "line 5: unknown key \"treshold\""},
		{"no kind", "rules:\n  - name: a\n    fire: 0.5\n", "line 2: rule has no kind"},
		{"bad kind", "rules:\n  - name: a\n    kind: magic\n", "line 3: kind \"magic\" is not one of signature, orbit-count, orbit-growth"},
		{"no fire", "rules:\n  - name: a\n    kind: signature\n", "line 2: rule \"a\" has no fire level"},
		{"no orbit", "rules:\n  - name: a\n    kind: orbit-count\n    fire: 3\n", "line 2: orbit-count rule \"a\" has no orbit"},
		{"unknown orbit name", "rules:\n  - name: a\n    kind: orbit-count\n    orbit: centre of 4-star\n    fire: 3\n", "line 4: no orbit named \"centre of 4-star\""},
		{"orbit id out of range", "rules:\n  - name: a\n    kind: orbit-count\n    orbit: 15\n    fire: 3\n", "line 4: orbit 15 out of range 0..14"},
		{"signature fire above 1", "rules:\n  - name: a\n    kind: signature\n    fire: 1.5\n", "line 4: fire 1.5 out of range (0, 1]"},
		{"growth fire of 1", "rules:\n  - name: a\n    kind: orbit-growth\n    orbit: 7\n    fire: 1\n", "line 5: fire 1 out of range (1, ∞)"},
		{"count fire below 1", "rules:\n  - name: a\n    kind: orbit-count\n    orbit: 8\n    fire: 0.5\n", "line 5: fire 0.5 out of range [1, ∞)"},
		{"fire not a number", "rules:\n  - name: a\n    kind: signature\n    fire: high\n", `line 4: "high" is not a number`},
		{"rearm above fire", "rules:\n  - name: a\n    kind: signature\n    fire: 0.4\n    rearm: 0.5\n", "line 5: rearm 0.5 must be in [0, fire 0.4)"},
		{"negative min_total", "rules:\n  - name: a\n    kind: signature\n    fire: 0.4\n    min_total: -3\n", `line 5: "-3" is not a count`},
		{"negative cooldown", "rules:\n  - name: a\n    kind: signature\n    fire: 0.4\n    cooldown: -1m\n", "line 5: cooldown must not be negative"},
		{"bad name", "rules:\n  - name: Big Rule\n    kind: signature\n    fire: 0.4\n", "line 2: rule name \"Big Rule\" must be"},
		{"duplicate name", "rules:\n  - name: a\n    kind: signature\n    fire: 0.4\n  - name: a\n    kind: signature\n    fire: 0.5\n", "line 5: rule name \"a\" used twice"},
		{"duplicate key", "rules:\n  - name: a\n    kind: signature\n    fire: 0.4\n    fire: 0.5\n", "line 5: key \"fire\" given twice"},
		{"list for a value", "rules:\n  - name: [a, b]\n    kind: signature\n    fire: 0.4\n", "line 2: expected a single value"},
		// yaml.v3 reports syntax errors with the line of its parser's
		// context, which may be a line or two before the fault: only a
		// line within the text is demanded.
		{"YAML syntax", "rules:\n  - name: a\n   kind: signature\n", "re:^yaml: line [1-3]: "},
		{"unclosed list", "rules:\n  - name: a\n    kind: signature\n    fire: [0.4\n", "re:^yaml: line [1-4]: "},
	}
	for _, c := range cases {
		_, err := alert.ParseConfig([]byte(c.text), cat)
		if re, ok := strings.CutPrefix(c.want, "re:"); ok && err != nil {
			if !regexp.MustCompile(re).MatchString(err.Error()) {
				t.Errorf("%s: got %v, want an error matching %s", c.name, err, re)
			}
			continue
		}
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: got %v, want an error containing %q", c.name, err, c.want)
		}
	}
	// LoadConfig puts the file name in front.
	path := filepath.Join(t.TempDir(), "bad.yaml")
	if err := os.WriteFile(path, []byte("top_orbits: 0\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	_, err := alert.LoadConfig(path, cat)
	if err == nil || err.Error() != path+": line 1: top_orbits must be 1..15" {
		t.Fatalf("LoadConfig: %v", err)
	}
}

func TestNewPanicsOnInvalidConfig(t *testing.T) {
	defer func() {
		if p := recover(); p == nil || !strings.HasPrefix(p.(string), "alert: ") {
			t.Fatalf("panic %v, want one prefixed \"alert: \"", p)
		}
	}()
	alert.New(alert.Config{Lookback: time.Hour, TopOrbits: 1}, undirected4(t))
}

// Without a rules list the default rules apply, with the file's gates and
// settings.
func TestDefaultsSectionGatesDefaultRules(t *testing.T) {
	cat := undirected4(t)
	got, err := alert.ParseConfig([]byte("baseline: decayed\ndefaults:\n  min_degree: 5\n  min_total: 40\n  cooldown: 10m\n"), cat)
	if err != nil {
		t.Fatal(err)
	}
	want := alert.DefaultConfig(cat)
	want.Baseline = alert.BaselineDecayed
	for i := range want.Rules {
		want.Rules[i].MinDegree, want.Rules[i].MinTotal, want.Rules[i].Cooldown = 5, 40, 10*time.Minute
	}
	if !reflect.DeepEqual(got, want) {
		t.Fatalf("config\n got %+v\nwant %+v", got, want)
	}
}
