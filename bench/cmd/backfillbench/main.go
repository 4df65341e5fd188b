// Command backfillbench measures orbitwatch backfill end to end (decode →
// counts → Badger) on a generated Barabási–Albert edge log: events/s, peak
// resident memory, and bytes on disk per edge and per node vector version.
// It builds the orbitwatch binary and runs it as a child process, so the
// numbers are those a user sees.
//
//	go run ./bench/cmd/backfillbench -nodes 200000 -m 5
package main

import (
	"bytes"
	"flag"
	"fmt"
	"io/fs"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strconv"
	"syscall"
	"time"
)

func main() {
	nodes := flag.Int("nodes", 200000, "Barabási–Albert nodes")
	m := flag.Int("m", 5, "Barabási–Albert edges per new node")
	churn := flag.Int("churn", 0, "remove/re-add pairs after the growth")
	every := flag.Int("checkpoint-every", 100000, "backfill checkpoint interval in data lines")
	sizes := flag.String("max-nodes", "3,4", "graphlet sizes to measure")
	keep := flag.Bool("keep", false, "keep the work directory")
	flag.Parse()

	work, err := os.MkdirTemp("", "backfillbench-")
	check(err)
	if !*keep {
		defer os.RemoveAll(work)
	}
	bin := filepath.Join(work, "orbitwatch")
	run("go", "build", "-o", bin, "./cmd/orbitwatch")
	log := filepath.Join(work, "ba.csv")
	run("go", "run", "./bench/cmd/orbitgen", "-quiet", "-shape", "ba", "-nodes", strconv.Itoa(*nodes), "-m", strconv.Itoa(*m),
		"-churn", strconv.Itoa(*churn), "-seed", "1", "-out", log)
	fmt.Printf("command: go run ./bench/cmd/backfillbench -nodes %d -m %d -churn %d -checkpoint-every %d -max-nodes %s\n\n",
		*nodes, *m, *churn, *every, *sizes)
	fmt.Println("| max nodes | events | edges | wall s | events/s | peak RSS MiB | RSS bytes/edge | disk bytes/edge (1 checkpoint) | disk bytes/node version |")
	fmt.Println("| --- | --- | --- | --- | --- | --- | --- | --- | --- |")
	for _, k := range regexp.MustCompile(`\d+`).FindAllString(*sizes, -1) {
		one := backfill(bin, filepath.Join(work, "one-"+k), log, k, 1<<40)
		many := backfill(bin, filepath.Join(work, "many-"+k), log, k, *every)
		perEdge := float64(one.disk) / float64(one.edges)
		perVersion := float64(many.disk-one.disk) / float64(many.versions-one.versions)
		fmt.Printf("| %s | %d | %d | %.1f | %.0f | %.0f | %.0f | %.1f | %.1f |\n", k, many.events, many.edges,
			many.wall.Seconds(), float64(many.events)/many.wall.Seconds(), float64(many.rss)/(1<<20),
			float64(many.rss)/float64(many.edges), perEdge, perVersion)
	}
}

type result struct {
	events, edges, versions uint64
	wall                    time.Duration
	rss, disk               int64
}

var summary = regexp.MustCompile(`(\d+) lines read.*\n(?s:.*)\((\d+) nodes, (\d+) edges\); this run wrote (\d+) checkpoints, (\d+) node vector versions`)

func backfill(bin, data, log, k string, every int) result {
	cmd := exec.Command(bin, "backfill", "--data", data, "--input", log, "--max-nodes", k, "--checkpoint-every", strconv.Itoa(every))
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	start := time.Now()
	check(cmd.Run())
	wall := time.Since(start)
	sm := summary.FindStringSubmatch(stderr.String())
	if sm == nil {
		fmt.Fprintf(os.Stderr, "backfillbench: no summary in:\n%s", stderr.String())
		os.Exit(1)
	}
	atoi := func(s string) uint64 { n, _ := strconv.ParseUint(s, 10, 64); return n }
	return result{
		events: atoi(sm[1]), edges: atoi(sm[3]), versions: atoi(sm[5]),
		wall: wall,
		rss:  cmd.ProcessState.SysUsage().(*syscall.Rusage).Maxrss * 1024,
		disk: du(data),
	}
}

func du(dir string) int64 {
	var n int64
	filepath.WalkDir(dir, func(_ string, d fs.DirEntry, err error) error {
		if err == nil && !d.IsDir() {
			if fi, err := d.Info(); err == nil {
				n += fi.Size()
			}
		}
		return nil
	})
	return n
}

func run(name string, args ...string) {
	cmd := exec.Command(name, args...)
	cmd.Stdout, cmd.Stderr = os.Stderr, os.Stderr
	check(cmd.Run())
}

func check(err error) {
	if err != nil {
		fmt.Fprintln(os.Stderr, "backfillbench:", err)
		os.Exit(1)
	}
}
