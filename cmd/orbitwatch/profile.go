package main

import (
	"fmt"
	"os"
	"runtime/pprof"
)

// startProfile writes a CPU profile of the whole command to the file
// ORBITWATCH_CPUPROFILE names, when it is set (a developer's tool, see
// DEVELOPERS.md); the returned function stops it.
func startProfile() func() {
	path := os.Getenv("ORBITWATCH_CPUPROFILE")
	if path == "" {
		return func() {}
	}
	f, err := os.Create(path)
	if err != nil {
		fmt.Fprintf(os.Stderr, "orbitwatch: ORBITWATCH_CPUPROFILE: %v\n", err)
		return func() {}
	}
	if err := pprof.StartCPUProfile(f); err != nil {
		fmt.Fprintf(os.Stderr, "orbitwatch: ORBITWATCH_CPUPROFILE: %v\n", err)
		f.Close()
		return func() {}
	}
	return func() {
		pprof.StopCPUProfile()
		f.Close()
	}
}
