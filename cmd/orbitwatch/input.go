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
	afterSeq func(seq uint64) error // called after every data line applied or rejected

	// For resuming (backfill): lines at or below resume are read past
	// without being applied; skip says a whole input is known to be done
	// and how many lines it has; fileDone hears of every input read to its
	// end; stop is polled between lines.
	resume   uint64
	skip     func(i int) (lines uint64, done bool)
	fileDone func(i int, lines uint64)
	stop     func() error
	progress *progress.Reporter
	// appendRejects keeps an existing rejects file and adds to it.
	appendRejects bool

	read      uint64
	rejectOut *csv.Writer
	seq       uint64
}

func (in *ingest) run() error {
	if len(in.flags.inputs) == 0 {
		return errors.New("no --input given")
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

// file applies one input and returns its number of data lines.
func (in *ingest) file(path string) (uint64, error) {
	r, err := stream.Open(path, in.flags.options())
	if err != nil {
		return 0, fmt.Errorf("%s: %w", path, err)
	}
	defer r.Close()
	base := in.seq
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
			return in.seq - base, nil
		}
		var le *stream.LineError
		switch {
		case errors.As(err, &le):
			in.seq = base + uint64(le.Line)
			if in.seq <= in.resume {
				continue
			}
			in.read++
			in.applier.RejectLine(in.seq, reasonClass(le.Reason))
			if err := in.reject(path, le.Line, le.Reason, string(le.Raw)); err != nil {
				return 0, err
			}
		case err != nil:
			return 0, fmt.Errorf("%s: %w", path, err)
		default:
			in.seq = base + uint64(ev.Line)
			if in.seq <= in.resume {
				continue
			}
			in.read++
			err := in.applier.Apply(in.seq, ev)
			var rj *shard.Reject
			if errors.As(err, &rj) {
				if err := in.reject(path, ev.Line, rj.Reason.Error(), ""); err != nil {
					return 0, err
				}
			} else if err != nil {
				return 0, fmt.Errorf("%s line %d: %w", path, ev.Line, err)
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
