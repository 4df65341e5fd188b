package main

import (
	"bufio"
	"encoding/csv"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strconv"
	"strings"

	"orbitwatch/delta"
	"orbitwatch/shard"
)

// countingFlags select the graph kind and graphlet size.
type countingFlags struct {
	kind     string
	maxNodes int
}

func (c *countingFlags) register(fs *flag.FlagSet) {
	fs.StringVar(&c.kind, "kind", "undirected", "graph kind: undirected, directed or signed (edges carry a sign column: + payment, - dispute)")
	fs.IntVar(&c.maxNodes, "max-nodes", 4, "largest graphlet size counted (undirected 3–5, directed 3–4)")
}

func (c *countingFlags) counting() (*shard.Counting, error) {
	kind, err := delta.ParseKind(c.kind)
	if err != nil {
		return nil, usagef("--kind: %w", err)
	}
	counting, err := shard.NewCounting(kind, c.maxNodes)
	if err != nil {
		return nil, usagef("--max-nodes: %w", err)
	}
	return counting, nil
}

func runCount(args []string) int {
	fs := flag.NewFlagSet("count", flag.ContinueOnError)
	var cf countingFlags
	var inf inputFlags
	cf.register(fs)
	inf.register(fs)
	if code := parseFlags(fs, args); code != 0 {
		return code
	}
	c, err := cf.counting()
	if err == nil {
		err = inf.check()
	}
	if err != nil {
		return fail("count", err)
	}
	// count keeps no records: it is the static path.
	a := shard.NewApplier(&shard.Counting{Catalog: c.Catalog, Recount: c.Recount}, 0, shard.Cuts{})
	in := &ingest{flags: &inf, applier: a}
	if err := in.run(); err != nil {
		in.summary("count")
		return fail("count", err)
	}
	in.summary("count")
	vec, err := recount(c, a)
	if err != nil {
		return fail("count", err)
	}
	w := bufio.NewWriter(os.Stdout)
	if err := writeMatrix(w, a.Names(), vec); err != nil {
		return fail("count", err)
	}
	if err := w.Flush(); err != nil {
		return fail("count", err)
	}
	return 0
}

func runReplay(args []string) int {
	fs := flag.NewFlagSet("replay", flag.ContinueOnError)
	var cf countingFlags
	var inf inputFlags
	cf.register(fs)
	inf.register(fs)
	every := fs.Uint64("checkpoint-every", 1000, "write the orbit matrix after every N data lines")
	out := fs.String("out", "", "`DIR` for the checkpoint files DIR/<n>.csv: missing or empty, or see --replace")
	verify := fs.Bool("verify", false, "recount statically at each checkpoint and stop at the first mismatch")
	replace := fs.Bool("replace", false, "remove the checkpoint files an earlier replay left in --out first (without it a non-empty --out is refused)")
	if code := parseFlags(fs, args); code != 0 {
		return code
	}
	if *every == 0 {
		return fail("replay", usagef("--checkpoint-every must be positive"))
	}
	c, err := cf.counting()
	if err == nil {
		err = inf.check()
	}
	if err == nil {
		err = prepareReplayDir(*out, *replace)
	}
	if err != nil {
		return fail("replay", err)
	}
	a := shard.NewApplier(c, 0, shard.Cuts{})
	var last, written uint64
	checkpoint := func(seq uint64) error {
		last = seq
		written++
		vec, err := a.Vectors()
		if err != nil {
			return fmt.Errorf("checkpoint %d: %w", seq, err)
		}
		if *verify {
			rec, err := recount(c, a)
			if err == nil {
				err = compare(a.Names(), vec, rec)
			}
			if err != nil {
				return fmt.Errorf("checkpoint %d: %w", seq, err)
			}
		}
		return writeMatrixFile(filepath.Join(*out, strconv.FormatUint(seq, 10)+".csv"), a.Names(), vec)
	}
	in := &ingest{flags: &inf, applier: a, afterSeq: func(seq uint64) error {
		if seq%*every == 0 {
			return checkpoint(seq)
		}
		return nil
	}}
	err = in.run()
	if err == nil && in.seq != last {
		err = checkpoint(in.seq)
	}
	in.summary("replay")
	if err != nil {
		return fail("replay", err)
	}
	if *verify {
		fmt.Printf("replay: verification passed: at each of %d checkpoints (the last at seq %d) every incremental vector equals the static recount\n", written, last)
	}
	return 0
}

// prepareReplayDir makes dir ready for replay's checkpoint files: created
// when missing, refused when it holds anything, so that the files of an
// earlier replay never mix with new ones. With replace, the files an
// earlier replay wrote (<n>.csv) are removed first; anything else in dir
// is still refused, since replay did not write it.
func prepareReplayDir(dir string, replace bool) error {
	ents, err := os.ReadDir(dir)
	if errors.Is(err, os.ErrNotExist) {
		return os.MkdirAll(dir, 0o755)
	}
	if err != nil {
		return err
	}
	if len(ents) == 0 {
		return nil
	}
	if !replace {
		return usagef("--out %s is not empty (%d entries): give an empty or new directory, or --replace to remove an earlier replay's checkpoint files", dir, len(ents))
	}
	for _, e := range ents {
		if !isCheckpointFile(e) {
			return usagef("--out %s holds %s, which replay did not write: --replace removes only checkpoint files <n>.csv", dir, e.Name())
		}
	}
	for _, e := range ents {
		if err := os.Remove(filepath.Join(dir, e.Name())); err != nil {
			return err
		}
	}
	return nil
}

// isCheckpointFile reports whether e is a file replay writes: <n>.csv.
func isCheckpointFile(e os.DirEntry) bool {
	n, ok := strings.CutSuffix(e.Name(), ".csv")
	if !ok || !e.Type().IsRegular() {
		return false
	}
	_, err := strconv.ParseUint(n, 10, 64)
	return err == nil
}

// compare checks incremental vectors against a recount and names the first
// node and orbit that differ.
func compare(names []string, inc, rec *delta.Vectors) error {
	node, orbit, a, b, ok := inc.FirstDiff(rec)
	if ok {
		return nil
	}
	name := strconv.Itoa(int(node))
	if int(node) < len(names) {
		name = strconv.Quote(names[node])
	}
	return fmt.Errorf("%w: node %s orbit %d: incremental %d, recount %d", errMismatch, name, orbit, a, b)
}

var errMismatch = errors.New("mismatch")

func writeMatrixFile(path string, names []string, vec *delta.Vectors) error {
	f, err := os.Create(path)
	if err != nil {
		return err
	}
	w := bufio.NewWriter(f)
	if err := writeMatrix(w, names, vec); err != nil {
		f.Close()
		return err
	}
	if err := w.Flush(); err != nil {
		f.Close()
		return err
	}
	return f.Close()
}

// writeMatrix writes the orbit matrix as CSV: header node,0,1,…, one row per
// existing node in order of first appearance, RFC 4180 quoting.
func writeMatrix(w io.Writer, names []string, vec *delta.Vectors) error {
	cw := csv.NewWriter(w)
	rec := make([]string, vec.NumOrbits()+1)
	rec[0] = "node"
	for o := 0; o < vec.NumOrbits(); o++ {
		rec[o+1] = strconv.Itoa(o)
	}
	cw.Write(rec)
	for x, name := range names {
		rec[0] = name
		for o := 0; o < vec.NumOrbits(); o++ {
			var c uint64
			if x < vec.NumNodes() {
				c = vec.Get(uint32(x), o)
			}
			rec[o+1] = strconv.FormatUint(c, 10)
		}
		cw.Write(rec)
	}
	cw.Flush()
	return cw.Error()
}
