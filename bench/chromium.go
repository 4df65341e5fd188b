package bench

import (
	"errors"
	"os/exec"
)

// Chromium returns the path of Debian's chromium (or chromium-browser),
// which the page tests drive headless.
func Chromium() (string, error) {
	for _, name := range []string{"chromium", "chromium-browser"} {
		if p, err := exec.LookPath(name); err == nil {
			return p, nil
		}
	}
	return "", errors.New("chromium not found on PATH: install Debian's chromium package (apt-get install -y chromium); CI installs it")
}
