package alert_test

import (
	"fmt"
	"math/rand/v2"
	"slices"
	"testing"
	"time"

	"orbitwatch/delta"
	"orbitwatch/shard"
	"orbitwatch/shard/alert"
	"orbitwatch/storage"
	"orbitwatch/stream"
)

// The test scenario is our own fictional payments network: accounts
// "acct-NNNN" paying each other at random, one payment a minute, over a
// window of one day, with patterns planted 36 hours in.
var scenarioStart = time.Date(2026, 7, 6, 0, 0, 0, 0, time.UTC)

const (
	accounts    = 1200
	perMinute   = 2
	background  = 48 * 60 * perMinute // two days
	plantAt     = 36 * 60             // minute the patterns start
	window      = 24 * time.Hour
	cutEvery    = 60 // events per cut: half an hour
	fanOutCount = 30
)

type payment struct {
	src, dst string
	at       time.Time
}

func acct(i int) string { return fmt.Sprintf("acct-%04d", i) }

func minute(m int) time.Time { return scenarioStart.Add(time.Duration(m) * time.Minute) }

// randomPayments returns n payments between distinct random accounts at
// the given minutes.
func randomPayments(r *rand.Rand, minutes []int) []payment {
	out := make([]payment, len(minutes))
	for i, m := range minutes {
		a := r.IntN(accounts)
		b := (a + 1 + r.IntN(accounts-1)) % accounts
		out[i] = payment{acct(a), acct(b), minute(m)}
	}
	return out
}

// pattern is a planted structure: its payments and the node ids whose
// alerts must appear, by rule.
type pattern struct {
	name     string
	payments []payment
	expect   map[string][]string // rule → nodes
}

// patterns returns the three planted patterns, each one payment a minute
// from plantAt:
//
//   - fan-out: acct-0007, an ordinary account (it pays four others ten
//     hours before), pays 30 other accounts;
//   - ring: acct-0101 and acct-0202 both pay acct-0301..0305, closing ten
//     4-cycles through each of the two (K_{2,5});
//   - clique: acct-0400..0404 pay each other, all ten pairs (K5: four K4s
//     through each).
func patterns() []pattern {
	fan := pattern{name: "fan-out", expect: map[string][]string{"fan-out": {acct(7)}, "signature-shift": {acct(7)}}}
	for i := range 4 {
		fan.payments = append(fan.payments, payment{acct(7), acct(700 + i), minute(plantAt - 600 + i)})
	}
	for i := range fanOutCount {
		fan.payments = append(fan.payments, payment{acct(7), acct(800 + 7*i), minute(plantAt + i)})
	}
	ring := pattern{name: "ring", expect: map[string][]string{"ring": {acct(101), acct(202)}}}
	m := plantAt
	for _, a := range []int{101, 202} {
		for b := 301; b <= 305; b++ {
			ring.payments = append(ring.payments, payment{acct(a), acct(b), minute(m)})
			m++
		}
	}
	clique := pattern{name: "clique", expect: map[string][]string{"clique": {acct(400), acct(401), acct(402), acct(403), acct(404)}}}
	m = plantAt
	for a := 400; a <= 404; a++ {
		for b := a + 1; b <= 404; b++ {
			clique.payments = append(clique.payments, payment{acct(a), acct(b), minute(m)})
			m++
		}
	}
	return []pattern{fan, ring, clique}
}

// streamOf merges the background with the planted payments, or, for the
// control (planted nil), with as many random payments at the same minutes,
// so both streams have the same volume and the same timing.
func streamOf(seed uint64, planted []payment) []payment {
	r := rand.New(rand.NewPCG(seed, 7))
	mins := make([]int, background)
	for i := range mins {
		mins[i] = i / perMinute
	}
	all := randomPayments(r, mins)
	extra := planted
	if extra == nil {
		var pm []int
		for _, p := range patterns() {
			for _, q := range p.payments {
				pm = append(pm, int(q.at.Sub(scenarioStart)/time.Minute))
			}
		}
		extra = randomPayments(rand.New(rand.NewPCG(seed, 8)), pm)
	}
	all = append(all, extra...)
	slices.SortStableFunc(all, func(x, y payment) int { return x.at.Compare(y.at) })
	return all
}

// run is the outcome of replaying a stream through the applier, a real
// Badger store and an Evaluator, cut by cut as a worker does.
type run struct {
	alerts []alert.Alert
	// near[i] says whether alert i's node was within two hops of a
	// planted node at its cut.
	near []bool
	ev   *alert.Evaluator
	// baselines[i] is the baseline vector the evaluator was given for
	// alert i's node (nil: none), now[i] its vector at the cut.
	baselines, now [][]uint64
}

// replay applies payments in order through the product's path, cutting
// every cutEvery events: the alert stage scores the nodes whose records
// changed against baselines derived from the store, and the committer
// writes each cut with its alerts. It holds every baseline an alert shows
// to the node's vector at the latest cut a look-back before, kept here in
// memory. When restartAt > 0 the evaluator is serialised after that many
// cuts and a fresh one restored from the bytes continues.
func replay(t *testing.T, cfg alert.Config, pays []payment, planted []string, restartAt int) run {
	t.Helper()
	counting, err := shard.NewCounting(delta.Undirected, 4)
	if err != nil {
		t.Fatal(err)
	}
	cat := counting.Catalog
	st, err := storage.Open(t.TempDir(), storage.Settings{Kind: delta.Undirected, MaxNodes: 4, NumOrbits: cat.NumOrbits(), Window: window})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	com := shard.NewCommitter(st, 4)
	ap := shard.NewApplier(counting, window, shard.Cuts{Lines: cutEvery})
	ev := alert.New(cfg, cat)
	stage := shard.NewAlertStage(ev, counting)
	if err := stage.Restore(st, &storage.State{}); err != nil {
		t.Fatal(err)
	}
	var out run
	cuts := 0
	var snaps []snapshot
	ap.OnCut = func(cp *storage.Checkpoint) error {
		got, err := stage.Evaluate(ap, cp, nil, time.Time{})
		if err != nil {
			return err
		}
		for _, a := range got {
			x, _ := ap.Lookup(a.Node)
			now, err := ap.Vector(x, nil)
			if err != nil {
				return err
			}
			out.alerts = append(out.alerts, a)
			out.near = append(out.near, withinTwoHops(ap, a.Node, planted))
			out.now = append(out.now, now)
			var base []uint64
			if cfg.Baseline == alert.BaselineLookback {
				x, _ := ap.Lookup(a.Node)
				base = snapshotAt(snaps, x, cp.Watermark.Add(-cfg.Lookback))
				for _, m := range a.Orbits {
					if b := float64(0); base != nil && m.Before != float64(base[m.Orbit]) || base == nil && m.Before != b {
						return fmt.Errorf("cut %d: alert %s on %s saw baseline %v of orbit %d, the in-memory history has %v", cp.Seq, a.Rule, a.Node, m.Before, m.Orbit, base)
					}
				}
			}
			out.baselines = append(out.baselines, base)
		}
		if cfg.Baseline == alert.BaselineLookback {
			vec, err := ap.Vectors()
			if err != nil {
				return err
			}
			snaps = append(snaps, snapshot{cp.Watermark, vec})
		}
		cuts++
		if cuts == restartAt {
			// A fresh stage restored from the store: the evaluator's state
			// from its blob, the baseline state from the stored cuts.
			if err := com.Put(cp); err != nil {
				return err
			}
			if err := com.Wait(cp.Seq); err != nil {
				return err
			}
			state, err := st.Load()
			if err != nil {
				return err
			}
			ev = alert.New(cfg, cat)
			stage = shard.NewAlertStage(ev, counting)
			return stage.Restore(st, state)
		}
		return com.Put(cp)
	}
	for i, p := range pays {
		if err := ap.Apply(uint64(i+1), stream.Event{Op: stream.OpAdd, Src: p.src, Dst: p.dst, TS: p.at, HasTS: true}); err != nil {
			t.Fatalf("payment %d: %v", i, err)
		}
	}
	if err := ap.Cut(); err != nil {
		t.Fatal(err)
	}
	if err := com.Close(); err != nil {
		t.Fatal(err)
	}
	stored, err := st.Alerts(storage.AlertFilter{})
	if err != nil {
		t.Fatal(err)
	}
	if len(stored) != len(out.alerts) {
		t.Fatalf("%d alerts stored, %d evaluated", len(stored), len(out.alerts))
	}
	out.ev = ev
	return out
}

// snapshot is every vector at one cut, kept in memory to check the as-of
// reads from the store.
type snapshot struct {
	watermark time.Time
	vec       *delta.Vectors
}

// snapshotAt returns node x's vector at the latest snapshot whose
// watermark is ≤ at, nil when there is none or x did not exist then.
func snapshotAt(snaps []snapshot, x uint32, at time.Time) []uint64 {
	for i := len(snaps) - 1; i >= 0; i-- {
		if !snaps[i].watermark.After(at) {
			if int(x) >= snaps[i].vec.NumNodes() {
				return nil
			}
			return snaps[i].vec.Row(x)
		}
	}
	return nil
}

func withinTwoHops(ap *shard.Applier, node string, planted []string) bool {
	x, ok := ap.Lookup(node)
	if !ok {
		return false
	}
	g := ap.Graph()
	for _, p := range planted {
		y, ok := ap.Lookup(p)
		if !ok {
			continue
		}
		if x == y || g.Adjacent(x, y) {
			return true
		}
		it := g.Neighbors(x).Iterator()
		for it.HasNext() {
			if g.Adjacent(it.Next(), y) {
				return true
			}
		}
	}
	return false
}
