package main

import (
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"sort"
	"strconv"
	"text/tabwriter"
	"time"

	"orbitwatch/delta/catalog"
	"orbitwatch/shard"
	"orbitwatch/shard/api"
	"orbitwatch/storage"
)

func init() {
	commands["query"] = command{"print one node's orbit vector as of a checkpoint of a data directory", runQuery}
}

// NodeVector is the shape `query --json` prints: the HTTP API's node body
// (JSON strings are UTF-8, so a node id that is not valid UTF-8 is not
// carried byte for byte).
type NodeVector = api.NodeVector

func runQuery(args []string) int {
	c := newReadCommand("query", true)
	node := c.fs.String("node", "", "`ID` of the node to read")
	asJSON := c.fs.Bool("json", false, "print one JSON object instead of a table")
	all := c.fs.Bool("all", false, "list orbits with a zero count too")
	if code := c.parse(args, c.required("node")); code != 0 {
		return code
	}
	st, cut, err := c.open()
	if err != nil {
		return fail("query", err)
	}
	defer st.Close()
	set := st.Settings()
	counting, err := shard.NewCounting(set.Kind, set.MaxNodes)
	if err != nil {
		return fail("query", err)
	}
	vec, at, err := shard.DeriveStored(st, counting.New(), *node, cut.Seq)
	if errors.Is(err, storage.ErrUnknownNode) {
		return fail("query", fmt.Errorf("node %q is not in %s at checkpoint %d", *node, c.dir, cut.Seq))
	}
	if err != nil {
		return fail("query", err)
	}
	nv := NodeVector{Node: *node, Kind: set.Kind.String(), MaxNodes: set.MaxNodes, Seq: at.Seq, EventTime: eventTime(at.Watermark), Orbits: vec}
	if *asJSON {
		b, err := json.Marshal(nv)
		if err != nil {
			return fail("query", err)
		}
		if _, err := os.Stdout.Write(append(b, '\n')); err != nil {
			return fail("query", err)
		}
		return 0
	}
	if err := writeVectorTable(os.Stdout, counting.Catalog, nv, *all); err != nil {
		return fail("query", err)
	}
	return 0
}

// writeVectorTable prints a header line with node, seq and event time, then
// one row per orbit (id, count, orbit name, graphlet name), zeros only when
// all is set.
func writeVectorTable(w io.Writer, cat *catalog.Catalog, nv NodeVector, all bool) error {
	fmt.Fprintf(w, "node %s  seq %d  event time %s\n", strconv.Quote(nv.Node), nv.Seq, formatEventTime(nv.EventTime, "none"))
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "orbit\tcount\torbit name\tgraphlet")
	for i, c := range nv.Orbits {
		if c == 0 && !all {
			continue
		}
		o := cat.Orbits[i]
		fmt.Fprintf(tw, "%d\t%d\t%s\t%s\n", i, c, o.Name, cat.Graphlets[o.Graphlet].Name)
	}
	return tw.Flush()
}

// readCommand holds the flags every read-side command shares: --data, and
// for commands that read one checkpoint, --at or --seq.
type readCommand struct {
	name  string
	fs    *flag.FlagSet
	dir   string
	point *pointFlags // nil when the command takes no --at/--seq
}

func newReadCommand(name string, withPoint bool) *readCommand {
	c := &readCommand{name: name, fs: flag.NewFlagSet(name, flag.ContinueOnError)}
	c.fs.StringVar(&c.dir, "data", "", "`DIR`: the --data directory of backfill, serve, worker or demo")
	if withPoint {
		c.point = &pointFlags{}
		c.point.register(c.fs)
	}
	return c
}

// parse parses args (the command's required flags are checked by
// parseFlags), then the point flags and then checks in order. It returns
// 0 to go on, else the exit code (2: usage) after printing the reason.
func (c *readCommand) parse(args []string, checks ...func() error) int {
	if code := parseFlags(c.fs, args); code != 0 {
		return code
	}
	if c.point != nil {
		if err := c.point.check(); err != nil {
			return c.usage(err)
		}
	}
	for _, check := range checks {
		if err := check(); err != nil {
			return c.usage(err)
		}
	}
	return 0
}

// required is a check that flag name was given. (parseFlags checks the
// flags usages lists as required; this is for flags required only with
// others.)
func (c *readCommand) required(name string) func() error {
	return func() error {
		if !given(c.fs, name) {
			return fmt.Errorf("--%s is required", name)
		}
		return nil
	}
}

// usage prints err as a usage error and returns exit code 2.
func (c *readCommand) usage(err error) int {
	return fail(c.name, usageError(err))
}

// open opens the data directory read-only and resolves the checkpoint the
// point flags name (the latest without them).
func (c *readCommand) open() (*storage.Store, storage.CheckpointInfo, error) {
	st, err := openData(c.dir)
	if err != nil {
		return nil, storage.CheckpointInfo{}, err
	}
	p := c.point
	if p == nil {
		p = &pointFlags{}
	}
	cut, err := p.resolve(st)
	if err != nil {
		st.Close()
		return nil, storage.CheckpointInfo{}, err
	}
	return st, cut, nil
}

// pointFlags choose a checkpoint: --at TIME (event time) or --seq N (log
// position); neither means the latest.
type pointFlags struct {
	at     timeFlag
	seq    uint64
	seqSet bool
}

func (p *pointFlags) register(fs *flag.FlagSet) {
	fs.Var(&p.at, "at", "read as of the latest checkpoint whose event-time watermark is ≤ `TIME`: "+timeForms)
	fs.Func("seq", "read as of the latest checkpoint at or before log position `N`", func(s string) error {
		n, err := strconv.ParseUint(s, 10, 64)
		if err != nil {
			return fmt.Errorf("not a sequence number: %q", s)
		}
		p.seq, p.seqSet = n, true
		return nil
	})
}

func (p *pointFlags) check() error {
	if p.at.set && p.seqSet {
		return errors.New("give --at or --seq, not both")
	}
	return nil
}

// resolve returns the checkpoint the flags name: for --seq N the latest
// with Seq ≤ N, for --at T the latest whose watermark is ≤ T (a checkpoint
// before any event time has the smallest watermark, so it is ≤ every T),
// else the latest. st must hold a checkpoint.
func (p *pointFlags) resolve(st *storage.Store) (storage.CheckpointInfo, error) {
	cps := st.Checkpoints()
	first := cps[0]
	var seq uint64
	switch {
	case p.seqSet:
		if p.seq < first.Seq {
			if st.Floor() > 0 {
				return storage.CheckpointInfo{}, fmt.Errorf("seq %d is before the retained history, which starts at checkpoint %d", p.seq, first.Seq)
			}
			return storage.CheckpointInfo{}, fmt.Errorf("no checkpoint at or before seq %d: the first checkpoint is at seq %d", p.seq, first.Seq)
		}
		seq = p.seq
	case p.at.set:
		t := p.at.t
		s, ok := st.SeqAtTime(t)
		if !ok {
			if s > 0 {
				return storage.CheckpointInfo{}, fmt.Errorf("the latest checkpoint at or before %s (seq %d) is before the retained history, which starts at checkpoint %d", t.Format(time.RFC3339Nano), s, first.Seq)
			}
			return storage.CheckpointInfo{}, fmt.Errorf("no checkpoint at or before event time %s: the first checkpoint (seq %d) has event time %s", t.Format(time.RFC3339Nano), first.Seq, formatEventTime(eventTime(first.Watermark), "none"))
		}
		seq = s
	default:
		return cps[len(cps)-1], nil
	}
	i := sort.Search(len(cps), func(i int) bool { return cps[i].Seq > seq }) - 1
	return cps[i], nil
}

// eventTime is a checkpoint watermark for output: nil when no event had
// carried a time, else the time in UTC.
func eventTime(wm time.Time) *time.Time {
	if wm.IsZero() {
		return nil
	}
	t := wm.UTC()
	return &t
}

// formatEventTime writes t as RFC 3339 with nanoseconds, or none for nil.
func formatEventTime(t *time.Time, none string) string {
	if t == nil {
		return none
	}
	return t.Format(time.RFC3339Nano)
}
