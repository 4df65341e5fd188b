package bench

import (
	"bytes"
	"fmt"
	"io"
	"os/exec"
	"path/filepath"
)

// BuildBinary builds the orbitwatch command of this module into dir and
// returns its path; the go tool's output goes to log.
func BuildBinary(dir string, log io.Writer) (string, error) {
	out, err := exec.Command("go", "env", "GOMOD").Output()
	if err != nil || len(bytes.TrimSpace(out)) == 0 {
		return "", fmt.Errorf("go env GOMOD: %v (run inside the orbitwatch module)", err)
	}
	bin := filepath.Join(dir, "orbitwatch")
	cmd := exec.Command("go", "build", "-o", bin, "./cmd/orbitwatch")
	cmd.Dir = filepath.Dir(string(bytes.TrimSpace(out)))
	cmd.Stdout, cmd.Stderr = log, log
	if err := cmd.Run(); err != nil {
		return "", fmt.Errorf("go build ./cmd/orbitwatch: %w", err)
	}
	return bin, nil
}
