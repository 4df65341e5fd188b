package bench

import (
	"os/exec"
	"syscall"
)

// DieWithParent makes the kernel kill cmd's process when the process that
// starts it dies, so that a benchmark stopped part-way (killed, or its
// `go run` stopped) leaves no child hogging a core and skewing the next
// measurement. Call it before cmd.Start.
func DieWithParent(cmd *exec.Cmd) {
	if cmd.SysProcAttr == nil {
		cmd.SysProcAttr = &syscall.SysProcAttr{}
	}
	cmd.SysProcAttr.Pdeathsig = syscall.SIGKILL
}
