// Package bench measures orbitwatch's counters on synthetic graphs of its
// own fictional payments scenario (made by bench/gen): the cost of one edge
// event for each incremental engine under churn, the time of a full
// recount, their ratio, and the recount against networkx's triangle count
// on the same graph (the Benchmark functions of this package). Product
// measures the product's own counting state (shard.Applier with the
// counter it picks) for bench/cmd/orbitbench: the cost of an event by
// endpoint degree, reads, and the heap of the state (MeasureState);
// backfillbench and livebench build the orbitwatch binary (BuildBinary)
// and time its commands. bench/plot draws the charts of the reports.
//
//	go test -run '^$' -bench . -timeout 0 ./bench/
//	go test -run '^$' -bench Churn ./bench/ -bench.nodes 20000
//
// The -bench.* flags (see bench_test.go) size the graphs; the defaults are
// a Barabási–Albert graph on 200k nodes with m = 5 (≈1M edges) and the
// directed payments stream of 1.3M events (1,088,365 distinct arcs at seed 1).
//
// It is not for checking exactness (the delta packages' tests do that,
// against brute force and outside references); the few checks here only
// make sure the harness feeds the engines a valid stream.
package bench
