package storage

import (
	"bufio"
	"fmt"
	"math/rand/v2"
	"os"
	"os/exec"
	"slices"
	"strconv"
	"strings"
	"sync/atomic"
	"syscall"
	"testing"
	"time"

	"orbitwatch/delta"
)

// The crash test re-executes the test binary as a child that commits big
// checkpoints of the model scenario until it is SIGKILLed.
const crashChildEnv = "ORBITWATCH_STORAGE_CRASH_CHILD"

const (
	crashSeed  = 2026
	crashAccts = 60_000
	crashStep  = 20_000 // events per child checkpoint
)

func TestMain(m *testing.M) {
	if dir := os.Getenv(crashChildEnv); dir != "" {
		if err := crashChild(dir); err != nil {
			fmt.Fprintln(os.Stderr, "crash child:", err)
			os.Exit(2)
		}
		os.Exit(0)
	}
	os.Exit(m.Run())
}

// crashChild continues the scenario from the store's last checkpoint,
// printing "ready SEQ" once loaded and "done SEQ" after every commit.
func crashChild(dir string) error {
	st, err := Open(dir, undirected4)
	if err != nil {
		return err
	}
	s, err := st.Load()
	if err != nil {
		return err
	}
	m := modelFrom(s, undirected4.NumOrbits, crashSeed, crashAccts)
	fmt.Printf("ready %d\n", m.seq)
	for m.seq < 100*crashStep {
		m.run(m.seq + crashStep)
		if err := st.Commit(m.checkpoint()); err != nil {
			return err
		}
		fmt.Printf("done %d\n", m.seq)
	}
	return st.Close()
}

// TestCrashMidCheckpoint kills a child process at random moments while it
// commits big checkpoints, then reopens the store: the state must equal the
// last complete checkpoint bit for bit (every dictionary entry, edge
// multiplicity, orbit count and blob), and never be older than the last
// checkpoint the child reported done. Between kills the parent itself
// commits a checkpoint at a smaller step, usually below the torn one, so
// that the repair's write-through to torn versions is exercised when the
// child later passes them. At the end every checkpoint in the store is read
// back with ForEachAt and compared with the replayed scenario.
func TestCrashMidCheckpoint(t *testing.T) {
	dir := t.TempDir()
	rng := rand.New(rand.NewPCG(uint64(time.Now().UnixNano()), 1))
	want := newModel(delta.Undirected, undirected4.NumOrbits, crashSeed, crashAccts)
	rounds, torn := 0, 0
	maxRounds := 8
	if testing.Short() {
		maxRounds = 4
	}
	for ; rounds < maxRounds && (rounds < 4 || torn < 2); rounds++ {
		// Every other round lets the child finish one checkpoint first.
		lastDone := runAndKill(t, dir, rounds%2, time.Duration(rng.Int64N(int64(1500*time.Millisecond))))
		// Badger cannot replay a crashed writer's log read-only; the error
		// must say so, and a read-write open recovers.
		if ro, err := OpenReadOnly(dir); err == nil {
			if ro.Seq() < lastDone {
				t.Fatalf("round %d: read-only store at %d, child had completed %d", rounds, ro.Seq(), lastDone)
			}
			ro.Close()
		} else if !strings.Contains(err.Error(), "not closed cleanly") {
			t.Fatalf("round %d: read-only open after a crash: %v", rounds, err)
		}
		st := mustOpen(t, dir, undirected4)
		if len(st.torn) > 0 {
			torn++
		}
		s, err := st.Load()
		if err != nil {
			t.Fatal(err)
		}
		if s.Seq < lastDone {
			t.Fatalf("round %d: store at %d, child had completed %d", rounds, s.Seq, lastDone)
		}
		want.run(s.Seq)
		want.edges, want.nodes, want.changed = nil, nil, map[string][]byte{}
		checkState(t, s, want)
		t.Logf("round %d: killed after done %d, recovered %d, torn leftovers %d keys", rounds, lastDone, s.Seq, len(st.torn))
		// Two parent checkpoints in this process: one a third of a child
		// step ahead (below the torn version, if any), one past it; the
		// second reads back exactly only if the first wrote through to the
		// torn versions.
		cont := modelFrom(s, undirected4.NumOrbits, crashSeed, crashAccts)
		for _, ahead := range []uint64{crashStep / 3, crashStep + crashStep/3} {
			cont.run(s.Seq + ahead)
			if err := st.Commit(cont.checkpoint()); err != nil {
				t.Fatal(err)
			}
		}
		after, err := st.Load()
		if err != nil {
			t.Fatal(err)
		}
		want.run(after.Seq)
		want.edges, want.nodes, want.changed = nil, nil, map[string][]byte{}
		checkState(t, after, want)
		if err := st.Close(); err != nil {
			t.Fatal(err)
		}
	}
	if torn == 0 {
		t.Fatalf("no kill in %d rounds landed inside a checkpoint; the test proved nothing", rounds)
	}
	st, err := OpenReadOnly(dir)
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	replay := newModel(delta.Undirected, undirected4.NumOrbits, crashSeed, crashAccts)
	for _, c := range st.Checkpoints() {
		replay.run(c.Seq)
		n := 0
		if _, err := st.ForEachAt(c.Seq, func(node string, vec []uint64) error {
			if node != replay.dict.Name(uint32(n)) || !slices.Equal(vec, replay.vec.Row(uint32(n))) {
				return fmt.Errorf("checkpoint %d node %d: %q %v, want %q %v", c.Seq, n, node, vec, replay.dict.Name(uint32(n)), replay.vec.Row(uint32(n)))
			}
			n++
			return nil
		}); err != nil {
			t.Fatal(err)
		}
		if n != replay.dict.Len() {
			t.Fatalf("checkpoint %d: %d nodes exported, want %d", c.Seq, n, replay.dict.Len())
		}
	}
	t.Logf("%d rounds, %d landed inside a checkpoint, %d checkpoints verified", rounds, torn, len(st.Checkpoints()))
}

// runAndKill starts the child on dir, SIGKILLs it the given time after it
// has reported ready and then done dones times, and returns the last
// checkpoint it reported done.
func runAndKill(t *testing.T, dir string, dones int, after time.Duration) uint64 {
	t.Helper()
	cmd := exec.Command(os.Args[0], "-test.run=^$")
	cmd.Env = append(os.Environ(), crashChildEnv+"="+dir)
	cmd.Stderr = os.Stderr
	out, err := cmd.StdoutPipe()
	if err != nil {
		t.Fatal(err)
	}
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	var lastDone atomic.Uint64
	ready := make(chan struct{})
	lines := make(chan struct{})
	count := 0
	go func() {
		defer close(lines)
		sc := bufio.NewScanner(out)
		for sc.Scan() {
			word, num, _ := strings.Cut(sc.Text(), " ")
			n, _ := strconv.ParseUint(num, 10, 64)
			switch word {
			case "ready":
				lastDone.Store(n)
			case "done":
				lastDone.Store(n)
				count++
			}
			if word == "ready" && dones == 0 || word == "done" && count == dones {
				close(ready)
			}
		}
	}()
	select {
	case <-ready:
	case <-time.After(time.Minute):
		cmd.Process.Kill()
		t.Fatal("crash child did not get ready in a minute")
	}
	time.Sleep(after)
	if err := cmd.Process.Signal(syscall.SIGKILL); err != nil {
		t.Fatal(err)
	}
	<-lines
	err = cmd.Wait()
	if ws, ok := cmd.ProcessState.Sys().(syscall.WaitStatus); !ok || !ws.Signaled() {
		t.Fatalf("crash child ended before the kill: %v", err)
	}
	return lastDone.Load()
}
