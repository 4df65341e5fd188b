package storage

import (
	"bytes"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"sync/atomic"
	"syscall"
	"time"

	badger "github.com/dgraph-io/badger/v4"
)

// DefaultGCInterval is how often an open read-write store runs Badger's
// value-log garbage collection in the background.
const DefaultGCInterval = 5 * time.Minute

// gcDiscardRatio is the share of stale data a value-log file must hold
// before Badger rewrites it.
const gcDiscardRatio = 0.5

// Store is one Badger directory of node state. Reads may run concurrently
// with each other and with one Commit; Commit calls must not overlap.
type Store struct {
	db       *badger.DB
	dir      string
	settings Settings
	readOnly bool
	view     string // a reader's private copy (view.go), removed on Close

	mu       sync.RWMutex
	complete uint64              // last complete checkpoint, 0 if none
	dictLen  int                 // dictionary entries stored as of complete
	cps      []CheckpointInfo    // every complete checkpoint, by Seq
	floor    uint64              // retention floor: reads below it are refused
	torn     map[string][]uint64 // key → versions above complete left by a torn checkpoint, newest first
	failed   error               // a Commit that failed half-way; reopen to repair

	gcStop chan struct{}
	gcDone chan struct{}
	gcErr  error
	gcRuns atomic.Int64
}

// CheckpointInfo names one complete checkpoint.
type CheckpointInfo struct {
	Seq       uint64
	Watermark time.Time
	// Nodes is the dictionary size at the checkpoint: nodes 0..Nodes-1
	// existed then.
	Nodes int
	// Flush is Checkpoint.Flush: not a cut of the rules.
	Flush bool
}

// Open opens the store in dir for reading and writing, creating it (and
// dir) with settings s when dir is missing or empty. An existing store must
// have been created with the same settings. A directory that holds other
// files, or a Badger directory without orbitwatch settings, is refused.
// A checkpoint torn by a crash is repaired before Open returns.
func Open(dir string, s Settings) (*Store, error) {
	if err := s.validate(); err != nil {
		return nil, fmt.Errorf("storage: open %s: %w", dir, err)
	}
	fresh, err := prepareDir(dir)
	if err == nil {
		err = checkWritable(dir)
	}
	if errors.Is(err, ErrReadOnlyDir) {
		return nil, fmt.Errorf("storage: %w", err) // it names the directory
	}
	if err != nil {
		return nil, fmt.Errorf("storage: open %s: %w", dir, err)
	}
	if err := checkOpenRoom(dir); err != nil {
		return nil, fmt.Errorf("storage: %w", err) // it names the directory
	}
	st, err := openBadger(dir, false)
	if err != nil {
		return nil, err
	}
	if !fresh {
		err = st.readSettings()
		// A crash between Badger creating the directory and the settings
		// commit leaves a Badger directory with no records at all.
		switch {
		case errors.Is(err, errNoSettings) && st.empty():
			fresh, err = true, nil
		case err == nil:
			err = st.settings.mismatch(s)
		}
	}
	if fresh {
		err = st.writeSettings(s)
	}
	if err == nil {
		err = st.readMeta()
	}
	if err == nil {
		st.db.SetDiscardTs(st.floor)
		err = st.repair()
	}
	if err != nil {
		st.db.Close()
		return nil, fmt.Errorf("storage: open %s: %w", dir, err)
	}
	st.startGC(DefaultGCInterval)
	return st, nil
}

// OpenReadOnly opens an existing store for queries, history, export and
// verification; it never writes to dir, which may be read-only. Its
// settings are those recorded in it. It reads as of the last checkpoint
// complete when it was opened. While a writer holds the store, or after
// one stopped without closing it, it reads a private copy of the store
// made in a temporary directory (see view.go: time and space grow with
// the store's size); otherwise it reads in place, holding Badger's
// shared lock, so that a writer cannot open the store until Close. A
// missing directory is an error.
func OpenReadOnly(dir string) (*Store, error) {
	if _, err := os.Stat(filepath.Join(dir, badger.ManifestFilename)); err != nil {
		if _, derr := os.Stat(dir); derr != nil {
			return nil, fmt.Errorf("storage: open %s read-only: %w", dir, derr)
		}
		return nil, fmt.Errorf("storage: open %s read-only: not an orbitwatch store (no Badger manifest)", dir)
	}
	st, err := openBadger(dir, true)
	if err != nil {
		// A writer holds the store, or one stopped without closing it: its
		// logs end in unwritten space (or were just made, empty), which
		// Badger will not replay without writing. Read a private copy
		// instead (view.go); when that fails too, the store itself is
		// damaged, and Badger's own error says how.
		var verr error
		if st, verr = openView(dir, errors.Is(err, errInUse)); verr != nil {
			if errors.Is(err, errInUse) {
				err = verr
			}
			return nil, err
		}
	}
	if err = st.readSettings(); err == nil {
		err = st.readMeta()
	}
	if err != nil {
		view := st.view != ""
		st.Close()
		if view && errors.Is(err, errNoSettings) {
			// Badger has made its files; Open has not yet written the
			// settings record.
			return nil, fmt.Errorf("storage: open %s read-only: a writer is creating the store; it holds no checkpoint yet", dir)
		}
		return nil, fmt.Errorf("storage: open %s read-only: %w", dir, err)
	}
	return st, nil
}

// ErrReadOnlyDir is what opening a data directory for writing returns
// (wrapped) when this process may not write there.
var ErrReadOnlyDir = errors.New("read-only")

// checkWritable refuses a directory this process cannot write to, naming
// why (a read-only file system, or permissions), before Badger tries to
// and fails with an error that reads like damage.
func checkWritable(dir string) error {
	err := syscall.Access(dir, 2) // W_OK
	if err == nil {
		return nil
	}
	return readOnlyError(dir, err)
}

// readOnlyError says that dir is read-only when err is the system's
// refusal to write (EROFS, EACCES, EPERM), else returns err.
func readOnlyError(dir string, err error) error {
	why := ""
	switch {
	case errors.Is(err, syscall.EROFS):
		why = "it is on a read-only file system"
	case errors.Is(err, syscall.EACCES), errors.Is(err, syscall.EPERM):
		why = "this user may not write there"
	default:
		return err
	}
	return fmt.Errorf("data directory %s is %w (%s): the reading commands (query, history, export, verify) open it as it is; to write, make it writable", absDir(dir), ErrReadOnlyDir, why)
}

// errInUse is Badger's refusal of a directory another store holds.
var errInUse = errors.New("the store is in use by another open store or process")

// prepareDir makes dir exist and reports whether it was missing, empty, or
// left by a create interrupted before Badger wrote its manifest.
func prepareDir(dir string) (fresh bool, err error) {
	ents, err := os.ReadDir(dir)
	if errors.Is(err, os.ErrNotExist) {
		if err := os.MkdirAll(dir, 0o755); err != nil {
			return false, fmt.Errorf("data directory %s cannot be created: %w", absDir(dir), err)
		}
		return true, nil
	}
	if err != nil {
		return false, err
	}
	if _, err := os.Stat(filepath.Join(dir, badger.ManifestFilename)); err == nil {
		return false, nil
	}
	// Badger takes its LOCK file before it writes the manifest; a crash in
	// between leaves only that file, and no data.
	for _, e := range ents {
		if e.Name() != "LOCK" {
			return false, fmt.Errorf("not an orbitwatch store: directory is not empty and has no Badger manifest")
		}
	}
	return true, nil
}

// openBadger opens the Badger directory in managed mode with warnings-only
// logging. Level 0 is compacted on Close, so a store that is closed applies
// the retention floor to everything it held in memory. A panic inside Badger while reading a damaged directory becomes
// an error.
func openBadger(dir string, readOnly bool) (st *Store, err error) {
	opts := badger.DefaultOptions(dir).
		WithLoggingLevel(badger.WARNING).
		WithNumVersionsToKeep(1).
		WithNumCompactors(2).
		WithMemTableSize(memTableSize).
		WithDetectConflicts(false).
		WithMetricsEnabled(false).
		WithCompactL0OnClose(!readOnly).
		WithReadOnly(readOnly)
	if err := checkTables(dir, opts); err != nil {
		return nil, fmt.Errorf("storage: open %s: %w", dir, err)
	}
	defer func() {
		if p := recover(); p != nil {
			st, err = nil, fmt.Errorf("storage: open %s: damaged Badger directory: %v", dir, p)
		}
	}()
	db, err := badger.OpenManaged(opts)
	if err != nil && strings.Contains(err.Error(), "Cannot acquire directory lock") {
		return nil, fmt.Errorf("storage: open %s: %w: %v", dir, errInUse, err)
	}
	if err != nil {
		return nil, fmt.Errorf("storage: open %s: damaged or unreadable Badger directory: %w", dir, err)
	}
	return &Store{db: db, dir: dir, readOnly: readOnly}, nil
}

func (st *Store) writeSettings(s Settings) error {
	txn := st.db.NewTransactionAt(math.MaxUint64, true)
	defer txn.Discard()
	if err := txn.Set([]byte{pSettings}, s.encode()); err != nil {
		return err
	}
	if err := txn.CommitAt(1, nil); err != nil {
		return err
	}
	st.settings = s
	return st.db.Sync()
}

var errNoSettings = errors.New("not an orbitwatch store: Badger directory without a settings record")

// empty reports whether Badger holds no record at all.
func (st *Store) empty() bool {
	txn := st.db.NewTransactionAt(math.MaxUint64, false)
	defer txn.Discard()
	it := txn.NewIterator(badger.IteratorOptions{AllVersions: true})
	defer it.Close()
	it.Rewind()
	return !it.Valid()
}

func (st *Store) readSettings() error {
	txn := st.db.NewTransactionAt(math.MaxUint64, false)
	defer txn.Discard()
	item, err := txn.Get([]byte{pSettings})
	if errors.Is(err, badger.ErrKeyNotFound) {
		return errNoSettings
	}
	if err != nil {
		return err
	}
	b, err := item.ValueCopy(nil)
	if err != nil {
		return err
	}
	if st.settings, err = decodeSettings(b); err != nil {
		return fmt.Errorf("not an orbitwatch store: %w", err)
	}
	return nil
}

// readMeta finds the last complete checkpoint (the latest version of the
// meta record), the list of checkpoints and the retention floor.
func (st *Store) readMeta() error {
	txn := st.db.NewTransactionAt(math.MaxUint64, false)
	defer txn.Discard()
	if item, err := txn.Get([]byte{pFloor}); err == nil {
		if err := item.Value(func(b []byte) (err error) {
			st.floor, err = getUvarint(b, "retention floor")
			return err
		}); err != nil {
			return err
		}
	} else if !errors.Is(err, badger.ErrKeyNotFound) {
		return err
	}
	item, err := txn.Get([]byte{pMeta})
	if errors.Is(err, badger.ErrKeyNotFound) {
		return nil
	}
	if err != nil {
		return err
	}
	st.complete = item.Version()
	if err := item.Value(func(b []byte) error {
		n, err := getUvarint(b, "meta")
		st.dictLen = int(n)
		return err
	}); err != nil {
		return err
	}
	return st.readCheckpoints()
}

func (st *Store) readCheckpoints() error {
	txn := st.db.NewTransactionAt(st.complete, false)
	defer txn.Discard()
	it := txn.NewIterator(badger.IteratorOptions{Prefix: []byte{pCheckpoint}})
	defer it.Close()
	st.cps = st.cps[:0]
	for it.Rewind(); it.Valid(); it.Next() {
		item := it.Item()
		k := item.Key()
		if len(k) != 9 {
			return fmt.Errorf("corrupt checkpoint record key %x", k)
		}
		var info CheckpointInfo
		if err := item.Value(func(b []byte) (err error) {
			info, err = decodeCheckpointRecord(beUint64(k[1:]), b)
			return err
		}); err != nil {
			return err
		}
		st.cps = append(st.cps, info)
	}
	if n := len(st.cps); n == 0 || st.cps[n-1].Seq != st.complete {
		return fmt.Errorf("corrupt store: meta names checkpoint %d but its record is missing", st.complete)
	}
	return nil
}

// repair undoes what a checkpoint torn by a crash left behind. Every
// checkpoint-written key with versions above the last complete checkpoint
// gets, at each of those versions, its value as of the last complete
// checkpoint (or a delete where it had none). Those versions are remembered
// in st.torn so that a later checkpoint below them writes through to them
// (see Commit). Repair is idempotent; it scans the history only when
// Badger holds a version above the last complete checkpoint.
func (st *Store) repair() error {
	st.torn = make(map[string][]uint64)
	if st.db.MaxVersion() <= st.complete {
		return nil
	}
	txn := st.db.NewTransactionAt(math.MaxUint64, false)
	defer txn.Discard()
	it := txn.NewIterator(badger.IteratorOptions{AllVersions: true})
	defer it.Close()
	wb := st.db.NewManagedWriteBatch()
	defer wb.Cancel()
	for _, p := range checkpointPrefixes {
		for it.Seek([]byte{p}); it.ValidForPrefix([]byte{p}); {
			key := it.Item().KeyCopy(nil)
			var vers []uint64
			var old []byte
			had := false
			found := false
			for ; it.Valid() && bytes.Equal(it.Item().Key(), key); it.Next() {
				item := it.Item()
				if item.Version() > st.complete {
					vers = append(vers, item.Version())
				} else if !found {
					found = true
					if had = !item.IsDeletedOrExpired(); had {
						var err error
						if old, err = item.ValueCopy(nil); err != nil {
							return err
						}
					}
				}
			}
			for _, v := range vers {
				var err error
				if had {
					err = wb.SetEntryAt(badger.NewEntry(key, old), v)
				} else {
					err = wb.DeleteAt(key, v)
				}
				if err != nil {
					return err
				}
			}
			if len(vers) > 0 {
				st.torn[string(key)] = vers
			}
		}
	}
	if err := wb.Flush(); err != nil {
		return fmt.Errorf("repairing a torn checkpoint: %w", err)
	}
	return st.db.Sync()
}

// Settings returns the store's recorded settings.
func (st *Store) Settings() Settings { return st.settings }

// Seq returns the last complete checkpoint's sequence, 0 if none.
func (st *Store) Seq() uint64 {
	st.mu.RLock()
	defer st.mu.RUnlock()
	return st.complete
}

// startGC starts the background value-log GC loop; Close stops it.
func (st *Store) startGC(every time.Duration) {
	st.gcStop = make(chan struct{})
	st.gcDone = make(chan struct{})
	go func() {
		defer close(st.gcDone)
		t := time.NewTicker(every)
		defer t.Stop()
		for {
			select {
			case <-st.gcStop:
				return
			case <-t.C:
				if err := st.CollectValueLog(); err != nil {
					st.gcErr = err
					return
				}
				st.gcRuns.Add(1)
			}
		}
	}()
}

// CollectValueLog runs Badger's value-log garbage collection until it finds
// nothing more to rewrite.
func (st *Store) CollectValueLog() error {
	for {
		err := st.db.RunValueLogGC(gcDiscardRatio)
		if errors.Is(err, badger.ErrNoRewrite) || errors.Is(err, badger.ErrRejected) {
			return nil
		}
		if err != nil {
			return fmt.Errorf("storage: value-log GC: %w", err)
		}
	}
}

// Close stops the background GC and closes Badger. It returns the GC
// loop's error, if any, joined with Badger's. Badger's close writes its
// memtable out as a table and compacts level 0 through mapped files (see
// space.go); when the file system lacks the room for that, Close leaves
// Badger open and returns a *SpaceError: everything committed is in
// Badger's synced log, which the next Open replays as after a crash, and
// the process's exit releases the directory.
func (st *Store) Close() error {
	if st.gcStop != nil {
		close(st.gcStop)
		<-st.gcDone
		st.gcStop = nil
	}
	if !st.readOnly {
		if err := checkRoom(st.dir, "close it (write its memory table out)", 0, st.Seq()); err != nil {
			return errors.Join(st.gcErr, fmt.Errorf("storage: close %s: %w", st.dir, err))
		}
	}
	err := errors.Join(st.gcErr, st.db.Close())
	if st.view != "" {
		err = errors.Join(err, os.RemoveAll(st.view))
	}
	return err
}

// memTableSize is Badger's memtable size. A smaller memtable than Badger's
// 64 MiB default keeps the skiplist that every write is inserted into
// shallower and more of it in cache; a checkpoint is many small entries.
// Measured with backfill (README, Performance).
const memTableSize = 16 << 20
