// Command orbitwatch keeps exact graphlet orbit counts (graphlet degree
// vectors) of every node current while edges come and go. This file holds
// the command table; each command's flags and wiring live in its own file.
package main

import (
	"fmt"
	"os"

	"orbitwatch/shard/api"
)

type command struct {
	summary string
	run     func(args []string) int
}

// commands is filled by init functions: the one here and those of files
// that add commands of their own. (An initializer would make a cycle: a
// command's help reads its summary from here.)
var commands = map[string]command{}

func init() {
	commands["catalog"] = command{"list the graphlets and orbits counted for a kind and size", runCatalog}
	commands["count"] = command{"apply an edge log and recount the final graph statically", runCount}
	commands["replay"] = command{"replay an edge log incrementally, writing the orbit matrix at checkpoints", runReplay}
}

func main() {
	os.Exit(runMain(os.Args[1:]))
}

// runMain runs the command args name and returns the exit code.
func runMain(args []string) int {
	if len(args) == 0 {
		printTopHelp(os.Stderr)
		return exitUsage
	}
	switch args[0] {
	case "-h", "-help", "--help", "help":
		if len(args) > 1 {
			if _, ok := commands[args[1]]; ok {
				return runMain([]string{args[1], "-h"})
			}
		}
		printTopHelp(os.Stdout)
		return exitOK
	case "-version", "--version", "version":
		fmt.Printf("orbitwatch %s\n", api.BuildVersion())
		return exitOK
	}
	c, ok := commands[args[0]]
	if !ok {
		fmt.Fprintf(os.Stderr, "orbitwatch: unknown command %q\nrun orbitwatch -h for the commands\n", args[0])
		return exitUsage
	}
	stop := startProfile()
	defer stop()
	return c.run(args[1:])
}
