package main

import (
	"errors"
	"fmt"
	"io/fs"
	"os"
	"strings"
	"syscall"

	"orbitwatch/storage"
)

// The exit codes of every command, as the top-level help and the README
// list them. A script can tell from the code alone whether to fix its
// command line (2), its input (3), or the machine it runs on (1).
const (
	exitOK       = 0
	exitFailure  = 1 // operational: I/O, disk, storage, network, a server gone
	exitUsage    = 2 // bad flags or arguments
	exitBadInput = 3 // --strict stopped at a bad line, or an input file is not a readable edge log
	// exitInterrupted is the shell's code for a command stopped by SIGINT
	// (128 + 2): backfill returns it when stopped before the end of its
	// input, having committed what it applied.
	exitInterrupted = 130
)

// exitCodesHelp is the exit-code table of the top-level help.
const exitCodesHelp = `exit codes:
  0  done
  1  operational failure: I/O, disk, storage, network, a server gone
  2  usage: a bad or missing flag or argument
  3  bad input: --strict stopped at a bad line, or an input is not a readable edge log
  130  backfill interrupted (Ctrl-C or SIGTERM) before the end; rerun it to go on
`

// usageErr marks an error in the command line: a flag value out of range,
// a missing flag, flags that do not go together.
type usageErr struct{ error }

func (e usageErr) Unwrap() error { return e.error }

// usageError marks err as a fault of the command line (exit code 2).
func usageError(err error) error {
	if err == nil {
		return nil
	}
	return usageErr{err}
}

// usagef is usageError of a formatted message.
func usagef(format string, a ...any) error { return usageErr{fmt.Errorf(format, a...)} }

// inputErr marks an error in the data a command reads: a log whose header
// or format cannot be read, a line --strict stops at.
type inputErr struct{ error }

func (e inputErr) Unwrap() error { return e.error }

// badInput marks err as a fault of the input (exit code 3), unless it is
// the machine's: a file that cannot be opened or read is operational.
func badInput(err error) error {
	if err == nil || isSystem(err) {
		return err
	}
	return inputErr{err}
}

// isSystem reports whether err comes from the operating system (a path
// that cannot be opened or read, an errno) rather than from the content.
func isSystem(err error) bool {
	var pe *fs.PathError
	var errno syscall.Errno
	return errors.As(err, &pe) || errors.As(err, &errno)
}

// exitCodeOf maps an error to the exit code of the command that stops on
// it.
func exitCodeOf(err error) int {
	var ue usageErr
	var ie inputErr
	switch {
	case err == nil:
		return exitOK
	case errors.As(err, &ue):
		return exitUsage
	case errors.As(err, &ie), errors.Is(err, errStrict):
		return exitBadInput
	}
	return exitFailure
}

// fail prints err for command name on one line of standard error (with a
// pointer to the command's help for a usage error) and returns the exit
// code exitCodeOf gives.
func fail(name string, err error) int {
	code := exitCodeOf(err)
	fmt.Fprintf(os.Stderr, "orbitwatch %s: %s\n", name, userMessage(name, err))
	if code == exitUsage {
		fmt.Fprintf(os.Stderr, "run orbitwatch %s -h for its flags\n", name)
	}
	return code
}

// packageNames are the packages whose errors start with their name, as Go
// errors do for programmers; a user reads the message without them.
var packageNames = map[string]bool{"catalog": true, "storage": true, "stream": true, "shard": true, "delta": true, "alert": true, "api": true}

// userMessage is err's text for a user of command name: without package
// prefixes, without the command's own name or any part repeated back to
// back ("catalog: catalog: …"), and with the sequence numbers storage
// uses internally ("read at 18446744073709551615" for "the latest")
// replaced by what they mean.
func userMessage(name string, err error) string {
	switch {
	case errors.Is(err, storage.ErrNoCheckpoint):
		return "no complete checkpoint at or before the point asked for"
	case errors.Is(err, storage.ErrRetention):
		return "the point asked for is before the retained history (see --keep-history)"
	}
	parts := strings.Split(err.Error(), ": ")
	var out []string
	for i, p := range parts {
		last := i == len(parts)-1
		switch {
		case !last && (packageNames[p] || (len(out) == 0 && p == name)):
		case len(out) > 0 && out[len(out)-1] == p:
		default:
			out = append(out, p)
		}
	}
	return strings.Join(out, ": ")
}
