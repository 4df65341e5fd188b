package gen

import (
	"bytes"
	"encoding/csv"
	"fmt"
	"io"
	"math"
	"slices"
	"testing"
	"time"
)

func edgeKey(e Edge) uint64 {
	u, v := min(e.U, e.V), max(e.U, e.V)
	return uint64(u)<<32 | uint64(v)
}

func TestBarabasiAlbert(t *testing.T) {
	for _, c := range []struct{ n, m int }{{2, 1}, {10, 1}, {50, 3}, {2000, 5}, {20000, 7}} {
		t.Run(fmt.Sprintf("n=%d,m=%d", c.n, c.m), func(t *testing.T) {
			edges := BarabasiAlbert(c.n, c.m, 1)
			if want := c.m*(c.m+1)/2 + (c.n-c.m-1)*c.m; len(edges) != want {
				t.Fatalf("%d edges, want m(m+1)/2+(n-m-1)m = %d", len(edges), want)
			}
			deg := make([]int, c.n)
			seen := make(map[uint64]bool, len(edges))
			for _, e := range edges {
				if e.U == e.V {
					t.Fatalf("self-loop %v", e)
				}
				if seen[edgeKey(e)] {
					t.Fatalf("duplicate edge %v", e)
				}
				seen[edgeKey(e)] = true
				deg[e.U]++
				deg[e.V]++
			}
			sum := 0
			for x, d := range deg {
				sum += d
				if d < c.m {
					t.Fatalf("node %d has degree %d < m", x, d)
				}
			}
			if sum != 2*len(edges) {
				t.Fatalf("degree sum %d, want 2·edges = %d", sum, 2*len(edges))
			}
			if MaxNode(edges) != c.n {
				t.Fatalf("MaxNode = %d, want %d", MaxNode(edges), c.n)
			}
		})
	}
}

func TestBarabasiAlbertIsSkewed(t *testing.T) {
	// Preferential attachment makes hubs: the maximum degree of a BA graph
	// grows like sqrt(n) (Barabási & Albert 1999), far above the mean 2m.
	n, m := 20000, 5
	deg := make([]int, n)
	for _, e := range BarabasiAlbert(n, m, 3) {
		deg[e.U]++
		deg[e.V]++
	}
	if top := slices.Max(deg); top < 20*2*m {
		t.Fatalf("max degree %d, want a hub above 20× the mean degree %d", top, 2*m)
	}
}

func TestDeterministicBySeed(t *testing.T) {
	a, b, c := BarabasiAlbert(3000, 4, 7), BarabasiAlbert(3000, 4, 7), BarabasiAlbert(3000, 4, 8)
	if !slices.Equal(a, b) {
		t.Fatal("BarabasiAlbert: same seed, different graphs")
	}
	if slices.Equal(a, c) {
		t.Fatal("BarabasiAlbert: different seeds, same graph")
	}
	_, p1 := Payments(DefaultPayments(3000), 7)
	_, p2 := Payments(DefaultPayments(3000), 7)
	_, p3 := Payments(DefaultPayments(3000), 8)
	if !slices.Equal(p1, p2) || slices.Equal(p1, p3) {
		t.Fatal("Payments is not decided by its seed")
	}
	_, d1 := DirectedPayments(DefaultDirected(5000), 7)
	_, d2 := DirectedPayments(DefaultDirected(5000), 7)
	_, d3 := DirectedPayments(DefaultDirected(5000), 8)
	if !slices.Equal(d1, d2) || slices.Equal(d1, d3) {
		t.Fatal("DirectedPayments is not decided by its seed")
	}
	c1 := Churn(a, 500, 10, 0, 7)
	c2 := Churn(a, 500, 10, 0, 7)
	c3 := Churn(a, 500, 10, 0, 8)
	if !slices.Equal(c1, c2) || slices.Equal(c1, c3) {
		t.Fatal("Churn is not decided by its seed")
	}
}

func TestPayments(t *testing.T) {
	cfg := DefaultPayments(40000)
	pop, edges := Payments(cfg, 1)
	seen := make(map[uint64]bool, len(edges))
	shopsOf := make([]int, pop.Accounts)
	payrolls := make([]int, pop.Accounts)
	shopDeg := make([]int, pop.Shops)
	group := 0
	for _, e := range edges {
		if e.U == e.V || seen[edgeKey(e)] {
			t.Fatalf("self-loop or duplicate %v", e)
		}
		seen[edgeKey(e)] = true
		ru, rv := pop.Role(e.U), pop.Role(e.V)
		switch {
		case ru == Account && rv == Shop:
			shopsOf[e.U]++
			shopDeg[int(e.V)-pop.Accounts]++
		case ru == Payroll && rv == Account:
			payrolls[e.V]++
		case ru == Account && rv == Account:
			if int(e.U)/cfg.GroupSize != int(e.V)/cfg.GroupSize {
				t.Fatalf("household edge %v crosses groups", e)
			}
			group++
		default:
			t.Fatalf("edge %v joins roles %v and %v", e, ru, rv)
		}
	}
	paid, shops := 0, 0
	for h := range shopsOf {
		if shopsOf[h] < 1 || shopsOf[h] > 2*cfg.ShopsPerHousehold-1 || payrolls[h] > 1 {
			t.Fatalf("household %d: %d shops, %d payrolls", h, shopsOf[h], payrolls[h])
		}
		paid += payrolls[h]
		shops += shopsOf[h]
	}
	if share := float64(paid) / float64(pop.Accounts); share < cfg.PayrollShare-0.02 || share > cfg.PayrollShare+0.02 {
		t.Errorf("payroll share %.3f, want %.2f ± 0.02", share, cfg.PayrollShare)
	}
	if mean := float64(shops) / float64(pop.Accounts); mean < float64(cfg.ShopsPerHousehold)-0.1 || mean > float64(cfg.ShopsPerHousehold)+0.1 {
		t.Errorf("mean shops per household %.3f, want %d ± 0.1", mean, cfg.ShopsPerHousehold)
	}
	// Full groups of 5 have 10 pairs, each kept with probability 0.4.
	if want := float64(pop.Accounts/cfg.GroupSize*10) * cfg.GroupPairShare; float64(group) < 0.95*want || float64(group) > 1.05*want {
		t.Errorf("%d household pairs, want %.0f ± 5%%", group, want)
	}
	sorted := slices.Clone(shopDeg)
	slices.Sort(sorted)
	// Zipf popularity ∝ (v+k)^−s: the top shop (k = 0) against the median
	// one (k ≈ Shops/2) is ((v+Shops/2)/v)^s, about 50 here.
	want := math.Pow((cfg.ZipfV+float64(cfg.Shops)/2)/cfg.ZipfV, cfg.ZipfS)
	if top, median := sorted[len(sorted)-1], sorted[len(sorted)/2]; float64(top) < want/2*float64(median) || float64(top) > 2*want*float64(median) {
		t.Errorf("shop popularity: top %d, median %d, want a ratio near %.0f", top, median, want)
	}
}

func TestDirectedPayments(t *testing.T) {
	cfg := DefaultDirected(300000)
	pop, ev := DirectedPayments(cfg, 1)
	if len(ev) != cfg.Events {
		t.Fatalf("%d events, want %d", len(ev), cfg.Events)
	}
	var purchase, repeat, payroll, refund, transfer int
	perShop := make([]int, pop.Shops)
	seen := make(map[uint64]bool, len(ev))
	arc := func(u, v uint32) uint64 { return uint64(u)<<32 | uint64(v) }
	start, end := cfg.Start.Unix(), cfg.Start.Add(cfg.Period).Unix()
	for i, e := range ev {
		if e.Op != Add || e.U == e.V {
			t.Fatalf("event %d: %+v", i, e)
		}
		if e.Unix < start || e.Unix >= end || (i > 0 && e.Unix < ev[i-1].Unix) {
			t.Fatalf("event %d: time %d outside [%d,%d) or going back", i, e.Unix, start, end)
		}
		switch ru, rv := pop.Role(e.U), pop.Role(e.V); {
		case ru == Account && rv == Shop:
			purchase++
			perShop[int(e.V)-pop.Accounts]++
			if seen[arc(e.U, e.V)] {
				repeat++
			}
		case ru == Payroll && rv == Account:
			payroll++
		case ru == Shop && rv == Account:
			refund++
			if !seen[arc(e.V, e.U)] {
				t.Fatalf("event %d refunds a purchase that never happened", i)
			}
		case ru == Account && rv == Account:
			transfer++
			if int(e.U)/cfg.GroupSize != int(e.V)/cfg.GroupSize {
				t.Fatalf("event %d: transfer across groups", i)
			}
		default:
			t.Fatalf("event %d joins roles %v and %v", i, ru, rv)
		}
		seen[arc(e.U, e.V)] = true
	}
	n := float64(len(ev))
	for _, c := range []struct {
		name      string
		got, want float64
	}{
		{"payroll", float64(payroll) / n, cfg.PayrollShare},
		{"refund", float64(refund) / n, cfg.RefundShare},
		{"transfer", float64(transfer) / n, cfg.TransferShare},
		{"purchase", float64(purchase) / n, 1 - cfg.PayrollShare - cfg.RefundShare - cfg.TransferShare},
	} {
		if c.got < c.want-0.005 || c.got > c.want+0.005 {
			t.Errorf("%s share %.4f, want %.3f ± 0.005", c.name, c.got, c.want)
		}
	}
	// A fresh draw can hit an arc already paid (popular shops), so the
	// repeats seen are the drawn ones plus the coincidences of the other
	// purchases: share ≈ r + (1−r)·c0, with c0 measured on the same
	// scenario without drawn repeats.
	noRepeat := cfg
	noRepeat.RepeatShare = 0
	c0 := repeatShare(DirectedPayments(noRepeat, 1))
	if got, want := float64(repeat)/float64(purchase), cfg.RepeatShare+(1-cfg.RepeatShare)*c0; got < want-0.02 || got > want+0.02 {
		t.Errorf("repeated purchase share %.4f, want %.3f ± 0.02 (drawn %.2f, coincidence %.3f)", got, want, cfg.RepeatShare, c0)
	}
	t.Logf("purchase %d, repeat share %.4f, coincidence share without drawn repeats %.4f", purchase, float64(repeat)/float64(purchase), c0)
	// Top merchant's share of fresh purchases: v^−s / Σ_k (v+k)^−s.
	var z float64
	for k := 0; k < cfg.Merchants; k++ {
		z += math.Pow(cfg.ZipfV+float64(k), -cfg.ZipfS)
	}
	if got, want := float64(slices.Max(perShop))/float64(purchase), math.Pow(cfg.ZipfV, -cfg.ZipfS)/z; got < 0.8*want || got > 1.2*want {
		t.Errorf("top merchant share %.4f, want %.4f ± 20%%", got, want)
	}
	if distinct := len(seen); float64(distinct) < 0.75*n {
		t.Errorf("%d distinct arcs of %d events: too many repeats", distinct, len(ev))
	}
}

// repeatShare returns the fraction of purchases (account→shop) whose arc
// was paid before.
func repeatShare(pop Population, ev []Event) float64 {
	seen := make(map[uint64]bool, len(ev))
	purchase, repeat := 0, 0
	for _, e := range ev {
		k := uint64(e.U)<<32 | uint64(e.V)
		if pop.Role(e.U) == Account && pop.Role(e.V) == Shop {
			purchase++
			if seen[k] {
				repeat++
			}
		}
		seen[k] = true
	}
	return float64(repeat) / float64(purchase)
}

func TestChurnAndGrow(t *testing.T) {
	edges := BarabasiAlbert(500, 3, 2)
	for _, lag := range []int{0, 1, 17} {
		ev := Churn(edges, 300, lag, 100, 5)
		if len(ev) != 600 {
			t.Fatalf("lag %d: %d events, want 600", lag, len(ev))
		}
		present := make(map[uint64]bool, len(edges))
		for _, e := range edges {
			present[edgeKey(e)] = true
		}
		maxOut, out := 0, 0
		for i, e := range ev {
			k := edgeKey(Edge{e.U, e.V})
			if e.Unix != 100+int64(i) {
				t.Fatalf("lag %d event %d at %d", lag, i, e.Unix)
			}
			if (e.Op == Remove) != present[k] {
				t.Fatalf("lag %d event %d: %v of an edge present=%v", lag, i, e.Op, present[k])
			}
			present[k] = e.Op == Add
			if e.Op == Remove {
				out++
			} else {
				out--
			}
			maxOut = max(maxOut, out)
		}
		if out != 0 || maxOut != lag+1 {
			t.Fatalf("lag %d: %d edges out at the end, at most %d out, want 0 and %d", lag, out, maxOut, lag+1)
		}
	}
	g := Grow(edges, 50)
	for i, e := range g {
		if e.Op != Add || e.U != edges[i].U || e.V != edges[i].V || e.Unix != 50+int64(i) {
			t.Fatalf("Grow event %d = %+v for edge %v", i, e, edges[i])
		}
	}
}

func TestAppendName(t *testing.T) {
	pop := Population{Accounts: 1234567, Shops: 12345, Payrolls: 120}
	for _, c := range []struct {
		id   uint32
		want string
	}{
		{0, "acct-000000"}, {123, "acct-000123"}, {1234566, "acct-1234566"},
		{pop.ShopID(0), "shop-0000"}, {pop.ShopID(42), "shop-0042"}, {pop.ShopID(12344), "shop-12344"},
		{pop.PayrollID(1), "payroll-01"}, {pop.PayrollID(119), "payroll-119"},
	} {
		if got := string(pop.AppendName(nil, c.id)); got != c.want {
			t.Errorf("name of %d = %q, want %q", c.id, got, c.want)
		}
	}
}

func TestLogRoundTrip(t *testing.T) {
	pop, ev := DirectedPayments(DefaultDirected(2000), 4)
	ev = append(ev, Event{Unix: ev[len(ev)-1].Unix, Op: Remove, U: ev[0].U, V: ev[0].V})
	var buf bytes.Buffer
	w := NewLogWriter(&buf, pop.AppendName)
	for _, e := range ev {
		if err := w.Write(e); err != nil {
			t.Fatal(err)
		}
	}
	if err := w.Flush(); err != nil {
		t.Fatal(err)
	}
	names := make(map[string]uint32, pop.Nodes())
	for i := 0; i < pop.Accounts; i++ {
		names[fmt.Sprintf("acct-%06d", i)] = uint32(i)
	}
	for i := 0; i < pop.Shops; i++ {
		names[fmt.Sprintf("shop-%04d", i)] = pop.ShopID(i)
	}
	for i := 0; i < pop.Payrolls; i++ {
		names[fmt.Sprintf("payroll-%02d", i)] = pop.PayrollID(i)
	}
	r := csv.NewReader(&buf)
	r.FieldsPerRecord = 4
	head, err := r.Read()
	if err != nil || fmt.Sprint(head) != "[ts op src dst]" {
		t.Fatalf("header %v, %v", head, err)
	}
	for i := 0; ; i++ {
		rec, err := r.Read()
		if err == io.EOF {
			if i != len(ev) {
				t.Fatalf("read %d events, wrote %d", i, len(ev))
			}
			break
		}
		if err != nil {
			t.Fatalf("line %d: %v", i+2, err)
		}
		ts, err := time.Parse(time.RFC3339, rec[0])
		if err != nil || ts.Unix() != ev[i].Unix || ts.Location() != time.UTC {
			t.Fatalf("line %d: ts %q (%v), want unix %d UTC", i+2, rec[0], err, ev[i].Unix)
		}
		u, okU := names[rec[2]]
		v, okV := names[rec[3]]
		if rec[1] != ev[i].Op.String() || !okU || !okV || u != ev[i].U || v != ev[i].V {
			t.Fatalf("line %d: %v, want %+v", i+2, rec, ev[i])
		}
	}
}

func TestLogWriterAllocatesNothing(t *testing.T) {
	pop := Population{Accounts: 100, Shops: 10, Payrolls: 2}
	w := NewLogWriter(io.Discard, pop.AppendName)
	e := Event{Unix: 1767225600, Op: Add, U: 3, V: pop.ShopID(4)}
	if a := testing.AllocsPerRun(1000, func() { _ = w.Write(e) }); a != 0 {
		t.Fatalf("Write allocates %.1f times per event", a)
	}
}

func TestEmptyLogHasHeader(t *testing.T) {
	var buf bytes.Buffer
	w := NewLogWriter(&buf, Population{Accounts: 1}.AppendName)
	if err := w.Flush(); err != nil || buf.String() != LogHeader+"\n" {
		t.Fatalf("empty log %q, %v", buf.String(), err)
	}
}

func BenchmarkBarabasiAlbert200k(b *testing.B) {
	for b.Loop() {
		edges := BarabasiAlbert(200000, 5, 1)
		b.ReportMetric(float64(len(edges)), "edges")
	}
}

func BenchmarkDirectedPayments1M(b *testing.B) {
	for b.Loop() {
		_, ev := DirectedPayments(DefaultDirected(1300000), 1)
		b.ReportMetric(float64(len(ev)), "events")
	}
}

// The benchmarks' directed graph must have at least a million arcs.
func TestDirectedMillionArcs(t *testing.T) {
	_, ev := DirectedPayments(DefaultDirected(1300000), 1)
	seen := make(map[uint64]struct{}, len(ev))
	for _, e := range ev {
		seen[uint64(e.U)<<32|uint64(e.V)] = struct{}{}
	}
	if len(seen) < 1000000 {
		t.Fatalf("%d distinct arcs in 1.3M events, want at least 1M", len(seen))
	}
}

// Uniform draws m·n distinct edges, no self-loops, ids below n, the same
// for the same seed; its degrees stay far below a hub's.
func TestUniform(t *testing.T) {
	const n, m = 2000, 5
	edges := Uniform(n, m, 3)
	if len(edges) != n*m {
		t.Fatalf("%d edges, want %d", len(edges), n*m)
	}
	seen := map[[2]uint32]bool{}
	deg := make([]int, n)
	for _, e := range edges {
		p := [2]uint32{min(e.U, e.V), max(e.U, e.V)}
		if e.U == e.V || e.U >= n || e.V >= n || seen[p] {
			t.Fatalf("bad or repeated edge %v", e)
		}
		seen[p] = true
		deg[e.U]++
		deg[e.V]++
	}
	if d := slices.Max(deg); d > 40 {
		t.Errorf("largest degree %d of a G(2000, 10000), mean 10", d)
	}
	if !slices.Equal(edges, Uniform(n, m, 3)) || slices.Equal(edges, Uniform(n, m, 4)) {
		t.Error("Uniform is not a function of its seed")
	}
}
