package main

import (
	"encoding/json"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"

	"orbitwatch/delta"
	"orbitwatch/delta/brute"
	"orbitwatch/delta/catalog"
)

// signedLog writes a CSV edge log with a sign column (+ payment, -
// dispute): adds of both signs, sign flips (a dispute on a paid pair, the
// last dispute closing), removes of either sign, and removes of a sign
// the pair does not hold (rejected). It returns the file, the events and
// the event time of each line.
type signedEvent struct {
	add, neg bool
	src, dst string
	ts       time.Time
}

func signedLog(t *testing.T, seed uint64, n int) (string, []signedEvent) {
	t.Helper()
	r := rand.New(rand.NewPCG(seed, 7))
	var b strings.Builder
	b.WriteString("ts,op,src,dst,sign\n")
	var evs []signedEvent
	ts := time.Date(2026, 6, 1, 0, 0, 0, 0, time.UTC)
	for range n {
		ts = ts.Add(time.Duration(r.IntN(300)) * time.Second)
		e := signedEvent{add: r.IntN(4) != 0, neg: r.IntN(3) == 0, src: fmt.Sprintf("acct-%02d", r.IntN(16)), dst: fmt.Sprintf("acct-%02d", r.IntN(16)), ts: ts}
		evs = append(evs, e)
		op, sign := "remove", "+"
		if e.add {
			op = "add"
		}
		if e.neg {
			sign = "-"
		} else if r.IntN(2) == 0 {
			sign = "" // absent means +
		}
		fmt.Fprintf(&b, "%s,%s,%s,%s,%s\n", ts.Format(time.RFC3339), op, e.src, e.dst, sign)
	}
	path := filepath.Join(t.TempDir(), "signed.csv")
	if err := os.WriteFile(path, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	return path, evs
}

// TestSignedBackfillQuery backfills a signed log with `orbitwatch backfill
// --kind signed` (2–3 and 2–4 nodes), then reads every node with `query
// --json`, now and as of an earlier cut, and demands the brute-force count
// of the signed graph the log builds up to that point, replayed here
// through delta.ApplySigned. It also holds the catalog command's signed
// JSON edges to the catalog.
func TestSignedBackfillQuery(t *testing.T) {
	path, evs := signedLog(t, 3, 600)
	for _, k := range []int{3, 4} {
		t.Run(fmt.Sprint("k=", k), func(t *testing.T) {
			data := filepath.Join(t.TempDir(), "data")
			r := mustRunCmd(t, "backfill", "--kind", "signed", "--max-nodes", strconv.Itoa(k), "--input", path, "--data", data, "--cut-every", "1h")
			if !strings.Contains(r.stderr, "rejected") {
				t.Fatalf("backfill reported no rejected removes:\n%s", r.stderr)
			}
			cat, err := catalog.New(delta.Signed, k)
			if err != nil {
				t.Fatal(err)
			}
			// The as-of read: the cut of the last whole hour before the
			// middle event.
			mid := evs[len(evs)/2].ts.Truncate(time.Hour)
			for _, at := range []time.Time{{}, mid} {
				g, names := delta.NewGraph(delta.Signed), map[string]uint32{}
				id := func(s string) uint32 {
					if x, ok := names[s]; ok {
						return x
					}
					names[s] = uint32(len(names))
					g.Grow(len(names))
					return names[s]
				}
				for _, e := range evs {
					if !at.IsZero() && !e.ts.Before(at) {
						break
					}
					if e.src == e.dst {
						continue // rejected before any node is made
					}
					if !e.add {
						if _, ok := names[e.src]; !ok {
							continue
						}
						if _, ok := names[e.dst]; !ok {
							continue
						}
					}
					u, v := id(e.src), id(e.dst)
					delta.ApplySigned(g, nil, u, v, e.neg, e.add) // rejections change nothing
				}
				want := brute.Count(g, cat)
				for name, x := range names {
					args := []string{"--data", data, "--node", name}
					if !at.IsZero() {
						args = append(args, "--at", at.Format(time.RFC3339))
					}
					nv := queryJSON(t, args...)
					if nv.Kind != "signed" || nv.MaxNodes != k {
						t.Fatalf("query header %+v", nv)
					}
					for o, w := range want.Row(x) {
						if nv.Orbits[o] != w {
							t.Fatalf("as of %v, node %s orbit %d (%s): query %d, brute %d", at, name, o, cat.Orbits[o].Name, nv.Orbits[o], w)
						}
					}
				}
				t.Logf("as of %v: %d nodes, %d ties verified", at, len(names), g.NumEdges())
			}
		})
	}
	r := mustRunCmd(t, "catalog", "--kind", "signed", "--max-nodes", "3", "--json")
	var out struct {
		Kind      string `json:"kind"`
		Graphlets []struct {
			Edges [][3]any `json:"edges"`
		} `json:"graphlets"`
	}
	if err := json.Unmarshal([]byte(r.stdout), &out); err != nil {
		t.Fatal(err)
	}
	cat, _ := catalog.New(delta.Signed, 3)
	if out.Kind != "signed" || len(out.Graphlets) != len(cat.Graphlets) {
		t.Fatalf("catalog --json: kind %q, %d graphlets", out.Kind, len(out.Graphlets))
	}
	for i, g := range out.Graphlets {
		for j, e := range g.Edges {
			want := [3]any{float64(cat.Graphlets[i].Edges[j][0]), float64(cat.Graphlets[i].Edges[j][1]), map[bool]string{false: "+", true: "-"}[cat.Graphlets[i].Neg[j]]}
			if e != want {
				t.Fatalf("graphlet %d edge %d: %v, want %v", i, j, e, want)
			}
		}
	}
}
