package main

import (
	"encoding/json"
	"fmt"
	"io"
	"os"
	"strconv"
	"strings"
	"text/tabwriter"

	"orbitwatch/shard"
	"orbitwatch/shard/api"
)

func init() {
	commands["similar"] = command{"list the nodes whose orbit signatures are nearest to one node's, as of a checkpoint", runSimilar}
	usages["similar"] = usageInfo{"orbitwatch similar --data DATA --node acct-000123 --k 10 --at 2026-03-01", []string{"data", "node"}}
}

func runSimilar(args []string) int {
	c := newReadCommand("similar", true)
	node := c.fs.String("node", "", "`ID` of the node to compare with")
	k := c.fs.Int("k", api.DefaultSimilar, "list the `N` nearest nodes")
	minDegree := c.fs.Int("min-degree", 1, "leave out nodes with fewer than `N` neighbours at the checkpoint (0 keeps those whose edges are all gone)")
	asJSON := c.fs.Bool("json", false, "print one JSON object (the API's similar body) instead of a table")
	bounds := func() error {
		if *k < 1 || *k > api.MaxSimilar {
			return fmt.Errorf("--k %d: want 1..%d", *k, api.MaxSimilar)
		}
		if *minDegree < 0 {
			return fmt.Errorf("--min-degree %d: want 0 or more", *minDegree)
		}
		return nil
	}
	if code := c.parse(args, bounds); code != 0 {
		return code
	}
	st, cut, err := c.open()
	if err != nil {
		return fail("similar", err)
	}
	defer st.Close()
	set := st.Settings()
	counting, err := shard.NewCounting(set.Kind, set.MaxNodes)
	if err != nil {
		return fail("similar", err)
	}
	sig, err := shard.SignaturesAt(st, counting, cut.Seq, nil)
	if err != nil {
		return fail("similar", err)
	}
	r := sig.Similar(*node, *k, *minDegree)
	if r.Status != 200 {
		return fail("similar", fmt.Errorf("node %q is not in %s at checkpoint %d", *node, c.dir, cut.Seq))
	}
	out := api.NewSimilarJSON(r, counting.Catalog)
	if *asJSON {
		b, err := json.Marshal(out)
		if err != nil {
			return fail("similar", err)
		}
		_, err = os.Stdout.Write(append(b, '\n'))
		if err != nil {
			return fail("similar", err)
		}
		return 0
	}
	if err := writeSimilarTable(os.Stdout, out); err != nil {
		return fail("similar", err)
	}
	return 0
}

// writeSimilarTable prints a header line with the node, seq and event
// time, then one row per near node: rank, node, distance, degree and the
// orbits that differ most (ids, then the first one's plain name).
func writeSimilarTable(w io.Writer, s api.SimilarJSON) error {
	fmt.Fprintf(w, "nodes nearest to %s  seq %d  event time %s  (GDV signature distance, 0 = same orbit counts)\n",
		strconv.Quote(s.Node), s.Seq, formatEventTime(s.EventTime, "none"))
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "rank\tnode\tdistance\tdegree\tdiffers most in orbits")
	for i, n := range s.Similar {
		ids := make([]string, len(n.Orbits))
		for j, o := range n.Orbits {
			ids[j] = strconv.Itoa(o.Orbit)
		}
		differ := "none"
		if len(ids) > 0 {
			differ = strings.Join(ids, ", ") + " (" + n.Orbits[0].Name + ")"
		}
		fmt.Fprintf(tw, "%d\t%s\t%.6f\t%d\t%s\n", i+1, strconv.Quote(n.Node), n.Distance, n.Degree, differ)
	}
	if len(s.Similar) == 0 {
		fmt.Fprintln(tw, "–\tno other node passes --min-degree\t\t\t")
	}
	return tw.Flush()
}
