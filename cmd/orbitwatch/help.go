package main

import (
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"sort"
	"strings"
	"unicode"
	"unicode/utf8"
)

// usageInfo is what a command's help shows beyond its flags: an example
// command line, and the flags that must be given (marked in the help and
// checked by parseFlags).
type usageInfo struct {
	example  string
	required []string
}

// usages holds the help of every command, by name. A command added in a
// file of its own adds its entry in its init function beside its
// commands entry; the help test holds every command to having one.
var usages = map[string]usageInfo{
	"catalog":     {"orbitwatch catalog --kind directed --max-nodes 3 --json", nil},
	"count":       {"orbitwatch count --max-nodes 4 --input payments.csv > matrix.csv", []string{"input"}},
	"replay":      {"orbitwatch replay --input payments.csv --checkpoint-every 1000 --out replay-dir --verify", []string{"input", "out"}},
	"backfill":    {"orbitwatch backfill --data DATA --input jan.csv.gz --input feb.csv.gz --window 30d", []string{"data", "input"}},
	"query":       {"orbitwatch query --data DATA --node acct-000123 --at 2026-03-01", []string{"data", "node"}},
	"history":     {"orbitwatch history --data DATA --node acct-000123 --from 2026-03-01 --to 2026-03-31", []string{"data", "node"}},
	"export":      {"orbitwatch export --data DATA --at 2026-03-01 --format parquet --out matrix.parquet", []string{"data", "format", "out"}},
	"verify":      {"orbitwatch verify --data DATA", []string{"data"}},
	"publish":     {"orbitwatch publish --nats nats://127.0.0.1:4222 --nkey DATA/nats-user.nk --input payments.csv", []string{"nats", "input"}},
	"serve":       {"orbitwatch serve --data DATA --window 30d --keep-history 180d", []string{"data"}},
	"worker":      {"orbitwatch worker --nats nats://n1:4222 --shard 0 --shards 3 --data /var/lib/orbitwatch", []string{"nats", "data", "shard", "shards"}},
	"demo":        {"orbitwatch demo --small", nil},
	"nats-server": {"orbitwatch nats-server --store /tmp/nats --listen 127.0.0.1:4222", []string{"store"}},
}

// hiddenCommands run but are not listed in the top-level help: tools for
// tests and trials.
var hiddenCommands = map[string]bool{"nats-server": true}

// parseFlags parses a command's flags (fs's name is the command's) and
// checks that its required flags were given. It returns 0 to go on. For a
// bad flag, a stray argument or a missing required flag it prints one line
// and a pointer to the help on standard error and returns 2. With -h it
// prints the command's help on standard output and exits 0 at once, as
// flag.ExitOnError does: nothing has been opened yet.
func parseFlags(fs *flag.FlagSet, args []string) int {
	name := fs.Name()
	fs.SetOutput(io.Discard)
	fs.Usage = func() {}
	err := fs.Parse(args)
	if errors.Is(err, flag.ErrHelp) {
		printHelp(os.Stdout, fs)
		os.Exit(exitOK)
	}
	if err == nil && fs.NArg() > 0 {
		err = fmt.Errorf("unexpected argument %q (flags start with --)", fs.Arg(0))
	}
	if err == nil {
		err = missingRequired(fs)
	}
	if err != nil {
		return fail(name, usageError(errors.New(doubleDash(err.Error()))))
	}
	return exitOK
}

// missingRequired names the first required flag of fs's command that was
// not given.
func missingRequired(fs *flag.FlagSet) error {
	given := map[string]bool{}
	fs.Visit(func(f *flag.Flag) { given[f.Name] = true })
	for _, r := range usages[fs.Name()].required {
		if !given[r] {
			f := fs.Lookup(r)
			if f == nil {
				panic("orbitwatch: " + fs.Name() + " requires an unknown flag " + r)
			}
			arg, _ := flag.UnquoteUsage(f)
			return fmt.Errorf("--%s is required", strings.TrimSpace(r+" "+arg))
		}
	}
	return nil
}

// given reports whether flag name was set on the command line.
func given(fs *flag.FlagSet, name string) bool {
	set := false
	fs.Visit(func(f *flag.Flag) { set = set || f.Name == name })
	return set
}

// doubleDash writes the flag package's "-name" as "--name", the form the
// help and the README use.
func doubleDash(msg string) string {
	for _, pre := range []string{"for flag -", "not defined: -", "needs an argument: -"} {
		msg = strings.Replace(msg, pre, pre+"-", 1)
	}
	return msg
}

// printHelp writes a command's help: its one-line description, an example,
// and its flags, the required ones marked.
func printHelp(w io.Writer, fs *flag.FlagSet) {
	name := fs.Name()
	u := usages[name]
	fmt.Fprintf(w, "%s.\n\nexample:\n  %s\n\nusage: orbitwatch %s [flags]\n\nflags:\n", sentence(commands[name].summary), u.example, name)
	required := map[string]bool{}
	for _, r := range u.required {
		required[r] = true
	}
	fs.VisitAll(func(f *flag.Flag) {
		arg, text := flag.UnquoteUsage(f)
		head := "  --" + f.Name
		if arg != "" {
			head += " " + arg
		}
		if required[f.Name] {
			head += "   (required)"
		}
		fmt.Fprintln(w, head)
		text = strings.ReplaceAll(text, "\n", "\n        ")
		if !isZeroDefault(f) {
			text += fmt.Sprintf(" (default %s)", f.DefValue)
		}
		fmt.Fprintf(w, "        %s\n", text)
	})
}

// isZeroDefault reports whether f's default is its type's zero value,
// which the help leaves unsaid.
func isZeroDefault(f *flag.Flag) bool {
	switch f.DefValue {
	case "", "0", "false", "0s", "[]":
		return true
	}
	return false
}

// sentence is a command summary as a sentence: a capital first letter.
func sentence(s string) string {
	r, n := utf8.DecodeRuneInString(s)
	return string(unicode.ToUpper(r)) + s[n:]
}

// printTopHelp writes the top-level help: what orbitwatch is, the commands
// (hidden ones left out), and the exit codes.
func printTopHelp(w io.Writer) {
	fmt.Fprintln(w, "orbitwatch keeps exact graphlet orbit counts (graphlet degree vectors) of every node of a live edge log.")
	fmt.Fprintln(w, "\nusage: orbitwatch COMMAND [flags]    (orbitwatch COMMAND -h for a command's help)")
	fmt.Fprintln(w, "       orbitwatch --version")
	fmt.Fprintln(w, "\ncommands:")
	names := make([]string, 0, len(commands))
	for n := range commands {
		if !hiddenCommands[n] {
			names = append(names, n)
		}
	}
	sort.Strings(names)
	for _, n := range names {
		fmt.Fprintf(w, "  %-10s %s\n", n, commands[n].summary)
	}
	fmt.Fprintln(w)
	fmt.Fprint(w, exitCodesHelp)
}
