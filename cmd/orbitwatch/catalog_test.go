package main

import (
	"encoding/json"
	"strconv"
	"strings"
	"testing"

	"orbitwatch/delta"
	"orbitwatch/delta/catalog"
)

// TestCatalogJSONNumbering runs `catalog --json` as a user would and
// checks that every orbit states its numbering: "published" with a
// source, or "project" without one; that the undirected 2–5 catalog
// marks 0–17 and 72 published (Pržulj 2007; the 5-path at 15–17 and K5
// at 72 are the published facts) and says which ids are
// recalled from memory; and that the JSON agrees with delta/catalog.
func TestCatalogJSONNumbering(t *testing.T) {
	for _, c := range []struct {
		kind string
		max  int
	}{{"undirected", 5}, {"undirected", 4}, {"directed", 3}} {
		out, code := run(t, "catalog", "--kind", c.kind, "--max-nodes", strconv.Itoa(c.max), "--json")
		if code != 0 {
			t.Fatalf("catalog %s %d: exit %d: %s", c.kind, c.max, code, out)
		}
		var got catalogJSON
		if err := json.Unmarshal([]byte(out), &got); err != nil {
			t.Fatalf("catalog %s %d: %v", c.kind, c.max, err)
		}
		kind, _ := delta.ParseKind(c.kind)
		cat, _ := catalog.New(kind, c.max)
		seen := 0
		memory := 0
		for _, g := range got.Graphlets {
			for _, o := range g.Orbits {
				seen++
				want := cat.Orbits[o.ID]
				if o.Numbering != want.Numbering || o.Source != want.Source {
					t.Errorf("%s orbit %d: JSON numbering %q source %q, catalog %q %q", c.kind, o.ID, o.Numbering, o.Source, want.Numbering, want.Source)
				}
				if o.Short != want.Short || o.Short == "" {
					t.Errorf("%s orbit %d: JSON short name %q, catalog %q", c.kind, o.ID, o.Short, want.Short)
				}
				switch o.Numbering {
				case "published":
					if o.Source == "" {
						t.Errorf("%s orbit %d published without a source", c.kind, o.ID)
					}
					if strings.Contains(o.Source, "from memory") {
						memory++
					}
				case "project":
					if o.Source != "" {
						t.Errorf("%s orbit %d is the project's but has source %q", c.kind, o.ID, o.Source)
					}
				default:
					t.Errorf("%s orbit %d: numbering %q", c.kind, o.ID, o.Numbering)
				}
				mustPublish := kind == delta.Undirected && (o.ID <= 17 || o.ID == 72)
				if mustPublish && o.Numbering != "published" {
					t.Errorf("%s orbit %d must be published", c.kind, o.ID)
				}
				if kind == delta.Directed && o.Numbering != "project" {
					t.Errorf("directed orbit %d claims a published id", o.ID)
				}
			}
		}
		if seen != cat.NumOrbits() {
			t.Errorf("%s 2..%d: JSON lists %d orbits, catalog %d", c.kind, c.max, seen, cat.NumOrbits())
		}
		if kind == delta.Undirected && c.max == 5 && memory == 0 {
			t.Errorf("undirected 2..5: no published id says it was recalled from memory")
		}
	}
}
