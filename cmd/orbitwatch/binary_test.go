package main

import (
	"os"
	"os/exec"
	"path/filepath"
	"sync"
	"testing"
)

var (
	binOnce sync.Once
	binPath string
	binErr  error
	binDir  string
)

// binaryPath builds the orbitwatch binary once per test run, so tests can
// run it as a real child process (and kill it).
func binaryPath(t testing.TB) string {
	t.Helper()
	binOnce.Do(func() {
		binDir, binErr = os.MkdirTemp("", "orbitwatch-bin-")
		if binErr != nil {
			return
		}
		binPath = filepath.Join(binDir, "orbitwatch")
		out, err := exec.Command("go", "build", "-o", binPath, ".").CombinedOutput()
		if err != nil {
			binErr = err
			t.Logf("go build: %s", out)
		}
	})
	if binErr != nil {
		t.Fatalf("building orbitwatch: %v", binErr)
	}
	return binPath
}
