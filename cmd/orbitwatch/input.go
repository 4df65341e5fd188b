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

	"orbitwatch/shard"
	"orbitwatch/stream"
)

// errStrict marks a stop at the first bad line under --strict (exit code 2).
var errStrict = errors.New("strict")

type listFlag []string

func (l *listFlag) String() string     { return strings.Join(*l, ",") }
func (l *listFlag) Set(s string) error { *l = append(*l, s); return nil }

// inputFlags are the flags every command that reads edge logs shares.
type inputFlags struct {
	inputs  listFlag
	format  string
	columns map[string]*string
	rejects string
	strict  bool
}

func (f *inputFlags) register(fs *flag.FlagSet) {
	fs.Var(&f.inputs, "input", "edge log: a CSV or JSON-lines file, .gz allowed, - for stdin (repeat for several, applied in order)")
	fs.StringVar(&f.format, "format", "", "input format: csv or jsonl (default: by file name, else by content)")
	f.columns = map[string]*string{}
	for _, k := range []string{"ts", "op", "src", "dst", "id"} {
		f.columns[k] = fs.String(k+"-column", "", "name of the input column or key that holds "+k+" (default "+k+")")
	}
	fs.StringVar(&f.rejects, "rejects", "", "write each rejected line with its line number and reason to this CSV file")
	fs.BoolVar(&f.strict, "strict", false, "stop at the first bad line with exit code 2")
}

func (f *inputFlags) options() stream.Options {
	o := stream.Options{Format: f.format, Columns: map[string]string{}}
	for k, v := range f.columns {
		if *v != "" {
			o.Columns[k] = *v
		}
	}
	return o
}

// ingest feeds edge logs through an applier in order. An event's sequence
// number is its data line number across the inputs in the order given; a
// rejected line uses up its number too.
type ingest struct {
	flags    *inputFlags
	applier  *shard.Applier
	afterSeq func(seq uint64) error // called after every data line, accepted or not

	read      uint64
	badLines  map[string]uint64
	rejectOut *csv.Writer
	seq       uint64
}

func (in *ingest) run() error {
	if len(in.flags.inputs) == 0 {
		return errors.New("no --input given")
	}
	if in.flags.rejects != "" {
		f, err := os.Create(in.flags.rejects)
		if err != nil {
			return err
		}
		defer f.Close()
		in.rejectOut = csv.NewWriter(f)
		in.rejectOut.Write([]string{"input", "line", "reason", "raw"})
		defer in.rejectOut.Flush()
	}
	in.badLines = map[string]uint64{}
	for _, path := range in.flags.inputs {
		if err := in.file(path); err != nil {
			return err
		}
	}
	if in.rejectOut != nil {
		in.rejectOut.Flush()
		return in.rejectOut.Error()
	}
	return nil
}

func (in *ingest) file(path string) error {
	r, err := stream.Open(path, in.flags.options())
	if err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	defer r.Close()
	base := in.seq
	for {
		ev, err := r.Next()
		if err == io.EOF {
			return nil
		}
		var le *stream.LineError
		switch {
		case errors.As(err, &le):
			in.seq = base + uint64(le.Line)
			in.read++
			in.badLines[reasonClass(le.Reason)]++
			if err := in.reject(path, le.Line, le.Reason, string(le.Raw)); err != nil {
				return err
			}
		case err != nil:
			return fmt.Errorf("%s: %w", path, err)
		default:
			in.seq = base + uint64(ev.Line)
			in.read++
			err := in.applier.Apply(in.seq, ev)
			var rj *shard.Reject
			if errors.As(err, &rj) {
				if err := in.reject(path, ev.Line, rj.Reason.Error(), ""); err != nil {
					return err
				}
			} else if err != nil {
				return fmt.Errorf("%s line %d: %w", path, ev.Line, err)
			}
		}
		if in.afterSeq != nil {
			if err := in.afterSeq(in.seq); err != nil {
				return err
			}
		}
	}
}

func (in *ingest) reject(path string, line int, reason, raw string) error {
	if in.rejectOut != nil {
		in.rejectOut.Write([]string{path, strconv.Itoa(line), reason, raw})
	}
	if in.flags.strict {
		return fmt.Errorf("%w: %s line %d: %s", errStrict, path, line, reason)
	}
	return nil
}

// reasonClass groups decode reasons for the summary: the text before any
// quoted detail.
func reasonClass(r string) string {
	if i := strings.IndexAny(r, "\":"); i > 0 {
		return strings.TrimSpace(r[:i])
	}
	return r
}

// summary prints lines read, applied and rejected by reason on stderr.
func (in *ingest) summary(name string) {
	st := in.applier.Stats()
	reasons := map[string]uint64{}
	var rejected uint64
	for r, n := range in.badLines {
		reasons[r] += n
		rejected += n
	}
	for r, n := range st.Rejected {
		reasons[r] += n
		rejected += n
	}
	fmt.Fprintf(os.Stderr, "orbitwatch %s: %d lines read, %d applied, %d rejected", name, in.read, st.Applied, rejected)
	if st.Expired > 0 {
		fmt.Fprintf(os.Stderr, ", %d expired by the window", st.Expired)
	}
	fmt.Fprintln(os.Stderr)
	keys := make([]string, 0, len(reasons))
	for r := range reasons {
		keys = append(keys, r)
	}
	sort.Strings(keys)
	for _, r := range keys {
		fmt.Fprintf(os.Stderr, "  rejected %8d  %s\n", reasons[r], r)
	}
}

// exitCode maps an ingest error to the command's exit code.
func exitCode(name string, err error) int {
	if errors.Is(err, errStrict) {
		fmt.Fprintf(os.Stderr, "orbitwatch %s: %v\n", name, err)
		return 2
	}
	return fail(name, err)
}
