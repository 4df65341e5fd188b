//go:build !linux

package bench

import "os/exec"

// DieWithParent does nothing where the kernel cannot tie a child's life to
// its parent's; see the Linux version.
func DieWithParent(cmd *exec.Cmd) {}
