package main

import (
	"encoding/csv"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"sort"
	"strconv"
	"strings"

	"orbitwatch/internal/progress"
	"orbitwatch/shard"
	"orbitwatch/stream"
)

// errStrict marks a stop at the first bad line under --strict (exit code
// 3, bad input).
var errStrict = errors.New("strict")

type listFlag []string

func (l *listFlag) String() string     { return strings.Join(*l, ",") }
func (l *listFlag) Set(s string) error { *l = append(*l, s); return nil }

// columnKeys are the event keys a log's columns can be mapped to.
var columnKeys = []string{"ts", "op", "src", "dst", "id", "sign", "amount"}

// inputFlags are the flags every command that reads edge logs shares.
type inputFlags struct {
	inputs    listFlag
	format    string
	columns   map[string]*string
	minAmount string
	rejects   string
	strict    bool
}

func (f *inputFlags) register(fs *flag.FlagSet) {
	fs.Var(&f.inputs, "input", "edge log: a CSV or JSON-lines file, .gz allowed, - for stdin (repeat for several, applied in order)")
	fs.StringVar(&f.format, "format", "", "input format: csv or jsonl (default: by file name, else by content)")
	f.columns = map[string]*string{}
	for _, k := range columnKeys {
		f.columns[k] = fs.String(k+"-column", "", "name of the input column or key that holds "+k+" (default "+k+")")
	}
	fs.StringVar(&f.minAmount, "min-amount", "", "keep only events whose amount (the --amount-column) is at least this decimal `NUMBER`; the others are counted as filtered, not rejected")
	fs.StringVar(&f.rejects, "rejects", "", "write each rejected line with its line number, reason and text to this CSV file")
	fs.BoolVar(&f.strict, "strict", false, "stop at the first bad line with exit code 3")
}

// check checks the input flags themselves, before any input is opened, so
// that a wrong flag is a usage error and not a bad input.
func (f *inputFlags) check() error {
	if f.format != "" && f.format != "csv" && f.format != "jsonl" {
		return usagef("--format must be csv or jsonl, not %q", f.format)
	}
	o := f.options()
	if f.minAmount == "" && o.Columns["amount"] != "" {
		return usagef("--amount-column says where amounts are, for --min-amount: give --min-amount too")
	}
	if err := (stream.Options{MinAmount: f.minAmount}).Check(); err != nil {
		return usagef("--min-amount: %q is not a decimal number such as 100 or 12.50", f.minAmount)
	}
	if err := o.Check(); err != nil {
		return usagef("column flags: %w", err)
	}
	return nil
}

func (f *inputFlags) options() stream.Options {
	o := stream.Options{Format: f.format, Columns: map[string]string{}, MinAmount: f.minAmount}
	for k, v := range f.columns {
		if *v != "" {
			o.Columns[k] = *v
		}
	}
	return o
}

// open opens one input; a missing column names the flag that maps one.
func (f *inputFlags) open(path string) (*stream.Reader, error) {
	r, err := stream.Open(path, f.options())
	var mc *stream.MissingColumnError
	if errors.As(err, &mc) {
		return nil, badInput(fmt.Errorf("%s: no column %s (columns found: %s); map one with --%s-column",
			path, mc.Name, strings.Join(mc.Found, ", "), mc.Key))
	}
	if err != nil {
		return nil, badInput(fmt.Errorf("%s: %w", path, err))
	}
	return r, nil
}

// lineCounts sorts every line read into exactly one heading.
type lineCounts struct {
	read, header, blank                  uint64
	applied, rejected, filtered, resumed uint64
	rejectReasons, filterReasons         map[string]uint64
	unusedColumns, unusedKeys            []string
}

func (c *lineCounts) reject(reason string) {
	if c.rejectReasons == nil {
		c.rejectReasons = map[string]uint64{}
	}
	c.rejected++
	c.rejectReasons[reasonClass(reason)]++
}

func (c *lineCounts) filter(reason string) {
	if c.filterReasons == nil {
		c.filterReasons = map[string]uint64{}
	}
	c.filtered++
	c.filterReasons[reasonClass(reason)]++
}

// noteUnused adds a reader's unused columns or keys, each once.
func (c *lineCounts) noteUnused(r *stream.Reader) {
	list := &c.unusedColumns
	if r.Format() == "jsonl" {
		list = &c.unusedKeys
	}
	for _, u := range r.Unused() {
		found := false
		for _, v := range *list {
			found = found || v == u
		}
		if !found {
			*list = append(*list, u)
		}
	}
}

// ingest feeds edge logs through an applier in order. An event's sequence
// number is its data record number across the inputs in the order given
// (header and blank lines are not records); a rejected or filtered record
// uses up its number too.
type ingest struct {
	flags    *inputFlags
	applier  *shard.Applier
	afterSeq func(seq uint64) error // called after every record applied, rejected or filtered

	// For resuming (backfill): records at or below resume are read past
	// without being applied; skip says a whole input is known to be done
	// and how many records it has; fileDone hears of every input read to
	// its end; stop is polled between lines.
	resume   uint64
	skip     func(i int) (lines uint64, done bool)
	fileDone func(i int, lines uint64)
	stop     func() error
	progress *progress.Reporter
	// appendRejects keeps an existing rejects file and adds to it.
	appendRejects bool

	counts    lineCounts
	rejectOut *csv.Writer
	seq       uint64
}

func (in *ingest) run() error {
	if len(in.flags.inputs) == 0 {
		return usagef("--input FILE is required")
	}
	if in.flags.rejects != "" {
		mode := os.O_CREATE | os.O_WRONLY | os.O_TRUNC
		if in.appendRejects {
			mode = os.O_CREATE | os.O_WRONLY | os.O_APPEND
		}
		f, err := os.OpenFile(in.flags.rejects, mode, 0o644)
		if err != nil {
			return err
		}
		defer f.Close()
		in.rejectOut = csv.NewWriter(f)
		if st, err := f.Stat(); err == nil && st.Size() == 0 {
			in.rejectOut.Write([]string{"input", "line", "reason", "raw"})
		}
		defer in.rejectOut.Flush()
	}
	for i, path := range in.flags.inputs {
		if in.skip != nil {
			if lines, done := in.skip(i); done {
				in.seq += lines
				continue
			}
		}
		lines, err := in.file(path)
		if err != nil {
			return err
		}
		if in.fileDone != nil {
			in.fileDone(i, lines)
		}
	}
	if in.rejectOut != nil {
		in.rejectOut.Flush()
		return in.rejectOut.Error()
	}
	return nil
}

// file applies one input and returns its number of data records.
func (in *ingest) file(path string) (uint64, error) {
	r, err := in.flags.open(path)
	if err != nil {
		return 0, err
	}
	defer r.Close()
	base := in.seq
	before := in.counts
	// Lines read are counted however the file ends.
	defer func() {
		in.counts.read += uint64(r.Lines())
		in.counts.header += uint64(r.Header())
		in.counts.blank += uint64(r.Blank())
	}()
	var offset int64
	for n := 0; ; n++ {
		if in.progress != nil && n%4096 == 0 {
			o := r.Offset()
			in.progress.Add(0, o-offset)
			offset = o
		}
		if in.stop != nil && n%1024 == 0 {
			if err := in.stop(); err != nil {
				return 0, err
			}
		}
		ev, err := r.Next()
		if err == io.EOF {
			if in.progress != nil {
				in.progress.Add(0, r.Offset()-offset)
			}
			in.counts.noteUnused(r)
			c := in.counts
			if records := c.applied + c.rejected + c.filtered + c.resumed - (before.applied + before.rejected + before.filtered + before.resumed); records != uint64(r.Records()) {
				panic(fmt.Sprintf("orbitwatch: %s: %d records read, %d counted", path, r.Records(), records))
			}
			return in.seq - base, nil
		}
		var le *stream.LineError
		var fe *stream.FilteredError
		switch {
		case errors.As(err, &le):
			in.seq = base + uint64(le.Line)
			if in.seq <= in.resume {
				in.counts.resumed++
				continue
			}
			in.counts.reject(le.Reason)
			if err := in.applier.RejectLine(in.seq, reasonClass(le.Reason)); err != nil {
				return 0, err
			}
			if err := in.reject(path, le.FileLine, le.Reason, le.Raw); err != nil {
				return 0, err
			}
		case errors.As(err, &fe):
			in.seq = base + uint64(fe.Line)
			if in.seq <= in.resume {
				in.counts.resumed++
				continue
			}
			in.counts.filter(fe.Reason)
			if err := in.applier.Pass(in.seq); err != nil {
				return 0, err
			}
		case err != nil:
			return 0, badInput(fmt.Errorf("%s: %w", path, err))
		default:
			in.seq = base + uint64(ev.Line)
			if in.seq <= in.resume {
				in.counts.resumed++
				continue
			}
			err := in.applier.Apply(in.seq, ev)
			var rj *shard.Reject
			if errors.As(err, &rj) {
				in.counts.reject(rj.Reason.Error())
				if err := in.reject(path, ev.FileLine, rj.Reason.Error(), r.Raw()); err != nil {
					return 0, err
				}
			} else if err != nil {
				return 0, fmt.Errorf("%s line %d: %w", path, ev.FileLine, err)
			} else {
				in.counts.applied++
			}
		}
		if in.progress != nil {
			in.progress.Add(1, 0)
		}
		if in.afterSeq != nil {
			if err := in.afterSeq(in.seq); err != nil {
				return 0, err
			}
		}
	}
}

// reject writes a rejected line to --rejects and stops under --strict.
func (in *ingest) reject(path string, line int, reason string, raw []byte) error {
	return writeReject(in.rejectOut, in.flags.strict, path, line, reason, raw)
}

func writeReject(out *csv.Writer, strict bool, path string, line int, reason string, raw []byte) error {
	if out != nil {
		out.Write([]string{path, strconv.Itoa(line), reason, string(raw)})
	}
	if strict {
		return fmt.Errorf("%w: %s line %d: %s", errStrict, path, line, reason)
	}
	return nil
}

// reasonClass groups reasons for the summary: the text before any quoted
// detail or colon.
func reasonClass(r string) string {
	if i := strings.IndexAny(r, "\":"); i > 0 {
		return strings.TrimSpace(r[:i])
	}
	return r
}

// summary prints on stderr every line read under one heading (applied,
// rejected by reason, filtered by reason, header, blank, already applied
// before this run: they add up to the lines read), and the columns or
// keys the logs have that nothing reads. more are further clauses of the
// same line.
func (in *ingest) summary(name string, more ...string) {
	c := &in.counts
	fmt.Fprintf(os.Stderr, "orbitwatch %s: %d lines read, %d applied, %d rejected, %d filtered, %d header, %d blank",
		name, c.read, c.applied, c.rejected, c.filtered, c.header, c.blank)
	if c.resumed > 0 {
		fmt.Fprintf(os.Stderr, ", %d read past (applied before this run)", c.resumed)
	}
	if ex := in.applier.Stats().Expired; ex > 0 {
		fmt.Fprintf(os.Stderr, "; %d expired by the window", ex)
	}
	for _, m := range more {
		fmt.Fprintf(os.Stderr, "; %s", m)
	}
	fmt.Fprintln(os.Stderr)
	c.printDetails()
}

// printDetails prints the rejects and filtered events by reason and the
// columns or keys nothing reads, on stderr.
func (c *lineCounts) printDetails() {
	printReasons("rejected", c.rejectReasons)
	printReasons("filtered", c.filterReasons)
	if len(c.unusedColumns) > 0 {
		fmt.Fprintf(os.Stderr, "  columns not used: %s\n", strings.Join(c.unusedColumns, ", "))
	}
	if len(c.unusedKeys) > 0 {
		fmt.Fprintf(os.Stderr, "  keys not used: %s\n", strings.Join(c.unusedKeys, ", "))
	}
}

func printReasons(heading string, reasons map[string]uint64) {
	keys := make([]string, 0, len(reasons))
	for r := range reasons {
		keys = append(keys, r)
	}
	sort.Strings(keys)
	for _, r := range keys {
		fmt.Fprintf(os.Stderr, "  %s %8d  %s\n", heading, reasons[r], r)
	}
}
