package alert_test

import (
	"fmt"

	"orbitwatch/delta"
	"orbitwatch/delta/catalog"
	"orbitwatch/shard/alert"
)

// A rules file names orbits by their catalog names; one cut with a node
// whose 4-cycle count reached the rule's level raises one alert.
func ExampleParseConfig() {
	cat, _ := catalog.New(delta.Undirected, 4)
	cfg, err := alert.ParseConfig([]byte(`
rules:
  - name: ring
    kind: orbit-count
    orbit: 4-cycle
    fire: 3
`), cat)
	if err != nil {
		fmt.Println(err)
		return
	}
	ev := alert.New(cfg, cat)
	now := []uint64{4, 8, 6, 0, 10, 10, 6, 4, 3, 0, 0, 0, 0, 0, 0}
	for _, a := range ev.Evaluate(alert.Cut{Seq: 42}, []alert.NodeChange{{Node: "acct-7", Degree: 4, Now: now}}) {
		fmt.Printf("%s on %s at cut %d: %v %s\n", a.Rule, a.Node, a.Seq, a.Score, a.Orbits[0].Name)
	}
	_, err = alert.ParseConfig([]byte("rules:\n  - name: ring\n    kind: orbit-count\n    orbit: 5-cycle\n    fire: 3\n"), cat)
	fmt.Println(err)
	// Output:
	// ring on acct-7 at cut 42: 3 4-cycle
	// line 4: no orbit named "5-cycle" in the undirected catalog on up to 4 nodes
}
