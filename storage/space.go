package storage

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strings"
)

// Badger writes its log, its tables and its discard statistics through
// memory-mapped files that it first extends as sparse files. When the file
// system cannot back a page written that way (a full disk, a full tmpfs),
// the kernel raises SIGBUS and the Go runtime dies with a stack dump: there
// is no error for Badger to return, and debug.SetPanicOnFault cannot help
// because those writes run on Badger's own goroutines. Badger offers no
// option that writes without a mapping, and it creates its files with
// O_EXCL, so they cannot be allocated ahead either. The store therefore
// measures free space itself before it lets Badger grow: every write asks
// for the bytes it adds plus the room Badger's background work needs after
// it (Room), and is refused with a *SpaceError, with nothing written, when
// the file system has less. Measured on tmpfs (storage and cmd/orbitwatch
// disk-full tests): without the check a process filling it dies of SIGBUS;
// with it a backfill or a worker that runs out of space stops or waits
// with the message. It cannot help when another process takes more than
// the room kept between a check and Badger's background work.

// ErrNoSpace is what every *SpaceError matches with errors.Is.
var ErrNoSpace = errors.New("not enough free space for the data directory")

// SpaceError is a write the store refused because the file system of its
// directory has too little free space. Nothing of the write reached
// Badger: the store is still at its last complete checkpoint, and the
// same write may be tried again once space is freed.
type SpaceError struct {
	Dir string
	// Op is what was refused, in words: "commit the cut at seq 4000",
	// "open the store for writing".
	Op string
	// Free and Need are in bytes: what the file system offers to this
	// process, and what the write needs (Room).
	Free, Need uint64
	// Seq is the store's last complete checkpoint (0: none) when Open is
	// false; a refused Open has not read it.
	Seq  uint64
	Open bool
}

func (e *SpaceError) Error() string {
	at := ""
	switch {
	case e.Open:
	case e.Seq > 0:
		at = fmt.Sprintf(" (the store stays at the checkpoint at seq %d)", e.Seq)
	default:
		at = " (the store holds no checkpoint yet)"
	}
	return fmt.Sprintf("data directory %s has %s free, %s needed to %s; nothing was written%s: free space on its file system, then try again",
		e.Dir, mib(e.Free), mib(e.Need), e.Op, at)
}

// Reason says what was refused and why without naming the directory, for
// answers that must not show the machine's paths.
func (e *SpaceError) Reason() string {
	return fmt.Sprintf("%s free on the data directory's file system, %s needed to %s", mib(e.Free), mib(e.Need), e.Op)
}

// Is makes errors.Is(err, ErrNoSpace) hold for every SpaceError.
func (e *SpaceError) Is(target error) bool { return target == ErrNoSpace }

func mib(b uint64) string { return fmt.Sprintf("%.1f MiB", float64(b)/(1<<20)) }

// Room for Badger's work beyond the bytes a write adds (see Room).
const (
	// flushRoom: a full memtable written out as a level-0 table while its
	// log file is still on disk (Badger flushes one memtable at a time).
	flushRoom = memTableSize
	// slackRoom: manifest records, the 1 MiB discard-statistics file, the
	// header pages of a new log file, the key registry.
	slackRoom = 4 << 20
	// maxCompactionRoom caps the room kept for one compaction. A
	// compaction writes its output before it deletes its input, and its
	// input is part of the tables, so the tables' size bounds its output;
	// beyond that size Badger's own level sizes bound it (with the default
	// options a level-0 compaction reads at most 15 memtables and the
	// overlapping base-level tables, a deeper one a table and the about ten
	// it overlaps), well under this cap.
	maxCompactionRoom = 1 << 30
	// entryOverhead is an upper bound on what Badger's log adds to each
	// key and value: header (two bytes and three uvarints), the version
	// (8 bytes), the checksum (4), its share of a transaction's end mark.
	entryOverhead = 40
)

// Room returns the free bytes a write of the given size needs in dir:
// the size itself (Badger's log), then room for a memtable flush, for one
// compaction (the size of the tables in dir, at most 1 GiB), and slack
// for Badger's small files. After a write that was granted its room, the
// flush and compaction it may set off still fit.
func Room(dir string, write uint64) uint64 {
	return write + flushRoom + min(tablesSize(dir), maxCompactionRoom) + slackRoom
}

// tablesSize is the size of the Badger tables in dir (0 when unreadable:
// the write that follows reports the directory's real problem).
func tablesSize(dir string) uint64 {
	ents, err := os.ReadDir(dir)
	if err != nil {
		return 0
	}
	var n uint64
	for _, e := range ents {
		if !strings.HasSuffix(e.Name(), ".sst") {
			continue
		}
		if fi, err := e.Info(); err == nil {
			n += uint64(fi.Size())
		}
	}
	return n
}

// checkRoom returns a *SpaceError when dir's file system has less free
// space than Room(dir, write); op says what would be refused, seq where
// the store stays. Where free space cannot be measured, the write goes
// ahead.
func checkRoom(dir, op string, write, seq uint64) error {
	if free, need, short := lacksRoom(dir, write); short {
		return &SpaceError{Dir: absDir(dir), Op: op, Free: free, Need: need, Seq: seq}
	}
	return nil
}

// checkOpenRoom is checkRoom for opening dir for writing: Badger's open
// writes the header of a new log file and may flush the logs of a store
// that was not closed.
func checkOpenRoom(dir string) error {
	if free, need, short := lacksRoom(dir, 0); short {
		return &SpaceError{Dir: absDir(dir), Op: "open the store for writing", Free: free, Need: need, Open: true}
	}
	return nil
}

// checkSpace is turned off only by the test that shows what the check
// prevents (a child process that dies of SIGBUS without it).
var checkSpace = true

func lacksRoom(dir string, write uint64) (free, need uint64, short bool) {
	free, ok := freeSpace(dir)
	if !ok || !checkSpace {
		return 0, 0, false
	}
	need = Room(dir, write)
	return free, need, free < need
}

func absDir(dir string) string {
	if abs, err := filepath.Abs(dir); err == nil {
		return abs
	}
	return dir
}
