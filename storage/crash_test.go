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
	crashStep  = 50_000 // events per child checkpoint: over 170k records, more than one Badger transaction
)

func TestMain(m *testing.M) {
	if dir := os.Getenv(crashChildEnv); dir != "" {
		if err := crashChild(dir); err != nil {
			fmt.Fprintln(os.Stderr, "crash child:", err)
			os.Exit(2)
		}
		os.Exit(0)
	}
	if dir := os.Getenv(fillChildEnv); dir != "" {
		checkSpace = os.Getenv(fillCheckEnv) != "off"
		if err := fillChild(dir); err != nil {
			fmt.Println("refused:", err)
			os.Exit(1)
		}
		os.Exit(0)
	}
	os.Exit(m.Run())
}

// crashChild continues the scenario from the store's last checkpoint,
// printing "ready SEQ" once loaded, "committing SEQ" before and "done SEQ"
// after every commit.
func crashChild(dir string) error {
	st, err := Open(dir, undirected4)
	if err != nil {
		return err
	}
	s, err := st.Load()
	if err != nil {
		return err
	}
	m, err := modelFrom(st, s, undirected4.NumOrbits, crashSeed, crashAccts)
	if err != nil {
		return err
	}
	fmt.Printf("ready %d\n", m.seq)
	for m.seq < 100*crashStep {
		m.run(m.seq + crashStep)
		fmt.Printf("committing %d\n", m.seq)
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
	minRounds, minTorn := 6, 2
	if testing.Short() {
		minRounds, minTorn = 3, 1
	}
	var commitTime time.Duration = time.Second
	for ; rounds < 20 && (rounds < minRounds || torn < minTorn); rounds++ {
		// Rounds kill the child while it opens (and repairs) the store,
		// at a random moment of a checkpoint's commit (as long as the
		// last one took), or after it finished a checkpoint.
		var k kill
		switch rounds % 3 {
		case 0:
			k = kill{after: "", delay: time.Duration(rng.Int64N(int64(400 * time.Millisecond)))}
		case 1:
			// The first quarter of a commit mostly fills Badger's first
			// transaction in memory, where a kill leaves nothing behind.
			k = kill{after: "committing", delay: commitTime/4 + time.Duration(rng.Int64N(int64(commitTime*3/4)))}
		case 2:
			k = kill{after: "done", delay: time.Duration(rng.Int64N(int64(commitTime)))}
		}
		lastDone, took := runAndKill(t, dir, k)
		if took > 0 {
			commitTime = took
		}
		// A reader reads the crashed writer's store as it stands (Badger
		// cannot replay its log without writing; a private copy can), and
		// sees every checkpoint the child completed.
		ro, err := OpenReadOnly(dir)
		if err != nil {
			t.Fatalf("round %d: read-only open after a crash: %v", rounds, err)
		}
		if ro.Seq() < lastDone {
			t.Fatalf("round %d: read-only store at %d, child had completed %d", rounds, ro.Seq(), lastDone)
		}
		if s, err := ro.Load(); err != nil || s.Seq != ro.Seq() {
			t.Fatalf("round %d: read-only load: %v", rounds, err)
		}
		ro.Close()
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
		checkState(t, st, s, want)
		t.Logf("round %d: kill %s+%v (last commit took %v), killed after done %d, recovered %d, torn leftovers %d keys", rounds, k.after, k.delay, took, lastDone, s.Seq, len(st.torn))
		if len(st.torn) == 0 {
			if err := st.Close(); err != nil {
				t.Fatal(err)
			}
			continue
		}
		// Two parent checkpoints in this process: one a third of a child
		// step ahead (below the torn version), one past it; the second
		// reads back exactly only if the first wrote through to the torn
		// versions.
		cont, err := modelFrom(st, s, undirected4.NumOrbits, crashSeed, crashAccts)
		if err != nil {
			t.Fatal(err)
		}
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
		checkState(t, st, after, want)
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
		s, err := st.LoadAt(c.Seq)
		if err != nil {
			t.Fatal(err)
		}
		if !slices.Equal(names(s.Dict), names(replay.dict)) || !slices.Equal(edgeList(s.Graph), edgeList(replay.g)) {
			t.Fatalf("checkpoint %d: %d names %d edges stored, want %d %d", c.Seq, s.Dict.Len(), s.Graph.NumEdges(), replay.dict.Len(), replay.g.NumEdges())
		}
		vec, err := storedVectors(st, c.Seq, s.Dict.Len(), undirected4.NumOrbits)
		if err != nil {
			t.Fatal(err)
		}
		if x, o, a, b, ok := vec.FirstDiff(replay.vec); !ok {
			t.Fatalf("checkpoint %d node %d count %d: stored %d, want %d", c.Seq, x, o, a, b)
		}
	}
	t.Logf("%d rounds, %d landed inside a checkpoint, %d checkpoints verified", rounds, torn, len(st.Checkpoints()))
}

// kill says when runAndKill kills: delay after the child's first line
// starting with after ("" : after the child started).
type kill struct {
	after string
	delay time.Duration
}

// runAndKill starts the child on dir, SIGKILLs it as k says, and returns
// the last checkpoint it reported done (0 if none) and how long its last
// complete commit took (0 if none).
func runAndKill(t *testing.T, dir string, k kill) (lastDone uint64, took time.Duration) {
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
	var done, tookNs atomic.Uint64
	seen := make(chan struct{})
	lines := make(chan struct{})
	go func() {
		defer close(lines)
		sc := bufio.NewScanner(out)
		var began time.Time
		signalled := k.after == ""
		for sc.Scan() {
			word, num, _ := strings.Cut(sc.Text(), " ")
			n, _ := strconv.ParseUint(num, 10, 64)
			switch word {
			case "committing":
				began = time.Now()
			case "done":
				done.Store(n)
				tookNs.Store(uint64(time.Since(began)))
			}
			if !signalled && word == k.after {
				signalled = true
				close(seen)
			}
		}
		if !signalled {
			close(seen)
		}
	}()
	if k.after != "" {
		select {
		case <-seen:
		case <-time.After(time.Minute):
			cmd.Process.Kill()
			t.Fatalf("crash child did not print %q in a minute", k.after)
		}
	}
	time.Sleep(k.delay)
	if err := cmd.Process.Signal(syscall.SIGKILL); err != nil {
		t.Fatal(err)
	}
	<-lines
	err = cmd.Wait()
	if ws, ok := cmd.ProcessState.Sys().(syscall.WaitStatus); !ok || !ws.Signaled() {
		t.Fatalf("crash child ended before the kill: %v", err)
	}
	return done.Load(), time.Duration(tookNs.Load())
}
