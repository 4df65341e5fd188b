package bench

import (
	"bufio"
	"fmt"
	"os"
	"os/exec"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"
)

// TestDieWithParent starts this test binary as a parent that starts a
// sleeping child with DieWithParent and prints its pid; the parent is
// SIGKILLed, and the child must be gone soon after.
func TestDieWithParent(t *testing.T) {
	if os.Getenv("BENCH_CHILD_PARENT") == "1" {
		child := exec.Command("sleep", "60")
		DieWithParent(child)
		if err := child.Start(); err != nil {
			fmt.Println("error", err)
			os.Exit(1)
		}
		fmt.Println(child.Process.Pid)
		child.Wait()
		os.Exit(0)
	}
	parent := exec.Command(os.Args[0], "-test.run", "^TestDieWithParent$")
	parent.Env = append(os.Environ(), "BENCH_CHILD_PARENT=1")
	out, err := parent.StdoutPipe()
	if err != nil {
		t.Fatal(err)
	}
	if err := parent.Start(); err != nil {
		t.Fatal(err)
	}
	line, err := bufio.NewReader(out).ReadString('\n')
	if err != nil {
		t.Fatal(err)
	}
	pid, err := strconv.Atoi(line[:len(line)-1])
	if err != nil {
		t.Fatalf("parent printed %q", line)
	}
	if !alive(pid) {
		t.Fatalf("child %d not running before the parent dies", pid)
	}
	parent.Process.Kill()
	parent.Wait()
	deadline := time.Now().Add(5 * time.Second)
	for alive(pid) {
		if time.Now().After(deadline) {
			syscall.Kill(pid, syscall.SIGKILL)
			t.Fatalf("child %d still running 5 s after its parent was killed", pid)
		}
		time.Sleep(20 * time.Millisecond)
	}
}

// alive reports whether pid runs: it exists and is not a zombie waiting
// for whoever inherited it to reap it.
func alive(pid int) bool {
	b, err := os.ReadFile(fmt.Sprintf("/proc/%d/stat", pid))
	if err != nil {
		return false
	}
	// The state follows the command name in brackets: "pid (comm) S …".
	i := strings.LastIndexByte(string(b), ')')
	return i < 0 || i+2 >= len(b) || b[i+2] != 'Z'
}
