// Command orbitwatch keeps exact graphlet orbit counts (graphlet degree
// vectors) of every node current while edges come and go. This file holds
// the command table; each command's flags and wiring live in its own file.
package main

import (
	"fmt"
	"os"
	"sort"
)

type command struct {
	summary string
	run     func(args []string) int
}

// commands is filled by the command table here and by init functions of
// files that add commands of their own.
var commands = map[string]command{
	"catalog": {"list the graphlets and orbits counted for a kind and size", runCatalog},
	"count":   {"apply an edge log and recount the final graph statically", runCount},
	"replay":  {"replay an edge log incrementally, writing the orbit matrix at checkpoints", runReplay},
}

func main() {
	if len(os.Args) < 2 || os.Args[1] == "-h" || os.Args[1] == "--help" || os.Args[1] == "help" {
		usage()
		if len(os.Args) < 2 {
			os.Exit(2)
		}
		return
	}
	c, ok := commands[os.Args[1]]
	if !ok {
		fmt.Fprintf(os.Stderr, "orbitwatch: unknown command %q\n\n", os.Args[1])
		usage()
		os.Exit(2)
	}
	stop := startProfile()
	code := c.run(os.Args[2:])
	stop()
	os.Exit(code)
}

func usage() {
	fmt.Fprintln(os.Stderr, "usage: orbitwatch COMMAND [flags]   (orbitwatch COMMAND -h for a command's flags)")
	fmt.Fprintln(os.Stderr, "\ncommands:")
	names := make([]string, 0, len(commands))
	for n := range commands {
		names = append(names, n)
	}
	sort.Strings(names)
	for _, n := range names {
		fmt.Fprintf(os.Stderr, "  %-10s %s\n", n, commands[n].summary)
	}
}

// fail prints an error for command name and returns exit code 1.
func fail(name string, err error) int {
	fmt.Fprintf(os.Stderr, "orbitwatch %s: %v\n", name, err)
	return 1
}
