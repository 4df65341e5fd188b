package main

import (
	"encoding/json"
	"flag"
	"fmt"
	"os"
	"text/tabwriter"

	"orbitwatch/delta"
	"orbitwatch/delta/catalog"
)

type catalogJSON struct {
	Kind      string         `json:"kind"`
	MaxNodes  int            `json:"max_nodes"`
	Graphlets []graphletJSON `json:"graphlets"`
}

type graphletJSON struct {
	ID     int         `json:"id"`
	Nodes  int         `json:"nodes"`
	Edges  any         `json:"edges"` // [a, b] pairs; [a, b, "+" or "-"] in signed catalogs
	Name   string      `json:"name"`
	Orbits []orbitJSON `json:"orbits"`
}

type orbitJSON struct {
	ID        int    `json:"id"`
	Positions []int  `json:"positions"`
	Name      string `json:"name"`
	Short     string `json:"short"`
	// Numbering is "published" (Source names the publication and says
	// whether the id was checked or recalled) or "project".
	Numbering string `json:"numbering"`
	Source    string `json:"source,omitempty"`
}

func runCatalog(args []string) int {
	fs := flag.NewFlagSet("catalog", flag.ContinueOnError)
	kindName := fs.String("kind", "undirected", "graph kind: undirected, directed or signed")
	maxNodes := fs.Int("max-nodes", 4, "largest graphlet size counted")
	asJSON := fs.Bool("json", false, "print JSON instead of a table")
	if code := parseFlags(fs, args); code != 0 {
		return code
	}
	kind, err := delta.ParseKind(*kindName)
	if err != nil {
		return fail("catalog", usageError(fmt.Errorf("--kind: %w", err)))
	}
	cat, err := catalog.New(kind, *maxNodes)
	if err != nil {
		return fail("catalog", usageError(fmt.Errorf("--max-nodes: %w", err)))
	}
	if *asJSON {
		out := catalogJSON{Kind: kind.String(), MaxNodes: cat.MaxNodes, Graphlets: []graphletJSON{}}
		for _, g := range cat.Graphlets {
			gj := graphletJSON{ID: g.ID, Nodes: g.Nodes, Edges: g.Edges, Name: g.Name, Orbits: []orbitJSON{}}
			if g.Edges == nil {
				gj.Edges = [][2]int{}
			}
			if kind == delta.Signed {
				signed := make([][3]any, len(g.Edges))
				for i, e := range g.Edges {
					signed[i] = [3]any{e[0], e[1], map[bool]string{false: "+", true: "-"}[g.Neg[i]]}
				}
				gj.Edges = signed
			}
			for _, o := range cat.Orbits {
				if o.Graphlet == g.ID {
					gj.Orbits = append(gj.Orbits, orbitJSON{ID: o.ID, Positions: o.Positions, Name: o.Name, Short: o.Short, Numbering: o.Numbering, Source: o.Source})
				}
			}
			out.Graphlets = append(out.Graphlets, gj)
		}
		enc := json.NewEncoder(os.Stdout)
		if err := enc.Encode(out); err != nil {
			return fail("catalog", err)
		}
		return 0
	}
	fmt.Printf("%s graphlets on 2–%d nodes: %d graphlets, %d orbits\n\n", kind, cat.MaxNodes, len(cat.Graphlets), cat.NumOrbits())
	tw := tabwriter.NewWriter(os.Stdout, 0, 4, 2, ' ', 0)
	fmt.Fprintln(tw, "orbit\tgraphlet\tnodes\tpositions\tnumbering\torbit name\tgraphlet name")
	for _, o := range cat.Orbits {
		g := cat.Graphlets[o.Graphlet]
		fmt.Fprintf(tw, "%d\t%d\t%d\t%v\t%s\t%s\t%s\n", o.ID, g.ID, g.Nodes, o.Positions, o.Numbering, o.Name, g.Name)
	}
	if err := tw.Flush(); err != nil {
		return fail("catalog", err)
	}
	return 0
}
