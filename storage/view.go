package storage

import (
	"bufio"
	"encoding/binary"
	"errors"
	"fmt"
	"hash/crc32"
	"io"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"time"

	badger "github.com/dgraph-io/badger/v4"
	"github.com/dgraph-io/badger/v4/table"
)

// A reader cannot open a store in place while a writer (backfill, serve,
// worker) holds it, and none of Badger's ways in is safe (measured, see
// DEVELOPERS.md, Readers beside a writer):
//
//   - Badger's read-only mode takes a shared lock the writer's exclusive
//     one excludes; without the lock (BypassLockGuard) it replays the
//     writer's live log, which always ends in unwritten space, and refuses
//     with "truncate required".
//   - Sharing the writer's files (the directory itself, hard links,
//     symbolic links) is unsafe however the log is dealt with: Badger
//     truncates a table file to zero before it deletes it after a
//     compaction, so a reader that maps it dies with SIGBUS at its next
//     read of that table.
//
// So a reader opens a view: a private copy of the store as it stands, in a
// temporary directory, which it opens in Badger's read-only mode and
// deletes on Close. Tables are immutable until deleted, so a table is
// copied whole or, when a compaction deletes it meanwhile, the copy is
// made again; the logs are copied up to the end of their last whole
// transaction, as Badger's own replay would read them. The view holds
// every checkpoint complete when it was made: Commit writes a checkpoint's
// meta record after its other records, so a view that has the meta
// record has them all.

// viewTries bounds the attempts at a consistent copy while a writer
// compacts and flushes under it.
const viewTries = 20

// errViewMoved is what a view copy returns when the writer replaced a file
// while it was copied; the copy is made again.
var errViewMoved = errors.New("the writer changed its files during the copy")

// openView copies the store in dir into a new temporary directory (under
// os.TempDir: TMPDIR) and opens the copy read-only. With a writer at work
// (writing true) a copy that met the writer's changes is made again; the
// files of a store nobody holds do not change, so one try says it all.
func openView(dir string, writing bool) (*Store, error) {
	tries := 1
	if writing {
		tries = viewTries
	}
	var last error
	for try := range tries {
		tmp, err := os.MkdirTemp("", "orbitwatch-view-")
		if err != nil {
			return nil, fmt.Errorf("storage: open %s read-only: a writer holds it or left it unclosed, and a private copy cannot be made: %w", dir, err)
		}
		st, err := func() (*Store, error) {
			if err := copyView(dir, tmp); err != nil {
				return nil, err
			}
			return openBadger(tmp, true)
		}()
		if err == nil {
			st.dir, st.view = dir, tmp
			return st, nil
		}
		os.RemoveAll(tmp)
		last = err
		if !errors.Is(err, errViewMoved) && !errors.Is(err, os.ErrNotExist) {
			break
		}
		time.Sleep(time.Duration(try+1) * 10 * time.Millisecond)
	}
	return nil, fmt.Errorf("storage: open %s read-only: a writer holds it or left it unclosed, and no consistent private copy could be made: %w", dir, last)
}

// copyView copies the store in src into the empty directory dst. The
// order matters: the list of memtable logs is taken before the manifest
// is read, and the logs are copied after, so every memtable the copied
// manifest does not yet hold as a table is among the logs copied (a log
// that vanished meanwhile, flushed into a table the copy lacks, makes the
// copy start again).
func copyView(src, dst string) error {
	ents, err := os.ReadDir(src)
	if err != nil {
		return err
	}
	var logs []string
	for _, e := range ents {
		if n := e.Name(); strings.HasSuffix(n, ".mem") || strings.HasSuffix(n, ".vlog") {
			logs = append(logs, n)
		}
	}
	slices.Sort(logs)
	tables, err := copyManifest(src, dst)
	if err != nil {
		return err
	}
	for _, id := range tables {
		if err := copyTable(table.NewFilename(id, src), table.NewFilename(id, dst)); err != nil {
			return err
		}
	}
	if err := copyFile(filepath.Join(src, badger.KeyRegistryFileName), filepath.Join(dst, badger.KeyRegistryFileName)); err != nil && !errors.Is(err, os.ErrNotExist) {
		return err
	}
	for _, name := range logs {
		if err := copyLog(filepath.Join(src, name), filepath.Join(dst, name)); err != nil {
			return err
		}
	}
	return nil
}

// copyManifest copies src's manifest up to its last whole change set and
// returns the ids of the tables it lists.
func copyManifest(src, dst string) ([]uint64, error) {
	b, err := os.ReadFile(filepath.Join(src, badger.ManifestFilename))
	if err != nil {
		return nil, err
	}
	path := filepath.Join(dst, badger.ManifestFilename)
	if err := os.WriteFile(path, b, 0o600); err != nil {
		return nil, err
	}
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	opts := badger.DefaultOptions(dst)
	mf, end, err := badger.ReplayManifestFile(f, opts.ExternalMagicVersion, opts)
	if err != nil {
		// A change set being appended as it was read fails its checksum.
		return nil, fmt.Errorf("%w: manifest: %v", errViewMoved, err)
	}
	if err := os.Truncate(path, end); err != nil {
		return nil, err
	}
	ids := make([]uint64, 0, len(mf.Tables))
	for id := range mf.Tables {
		ids = append(ids, id)
	}
	slices.Sort(ids)
	return ids, nil
}

// copyTable copies a table file, which Badger never changes until it
// truncates it to zero and deletes it: a copy shorter than the file was
// is of a table being deleted.
func copyTable(src, dst string) error {
	fi, err := os.Stat(src)
	if err != nil {
		return err
	}
	n, err := copyN(src, dst, -1)
	if err != nil {
		return err
	}
	if fi.Size() == 0 || n != fi.Size() {
		return fmt.Errorf("%w: table %s", errViewMoved, filepath.Base(src))
	}
	return nil
}

func copyFile(src, dst string) error {
	_, err := copyN(src, dst, -1)
	return err
}

// copyN copies the first n bytes of src (all of it when n < 0) into a new
// file dst and returns how many it copied. io.Copy between files uses
// copy_file_range on Linux: the kernel copies, and file systems with
// reflinks (XFS, Btrfs) share the blocks.
func copyN(src, dst string, n int64) (int64, error) {
	in, err := os.Open(src)
	if err != nil {
		return 0, err
	}
	defer in.Close()
	out, err := os.OpenFile(dst, os.O_CREATE|os.O_EXCL|os.O_WRONLY, 0o600)
	if err != nil {
		return 0, err
	}
	var r io.Reader = in
	if n >= 0 {
		r = io.LimitReader(in, n)
	}
	got, err := io.Copy(out, r)
	if cerr := out.Close(); err == nil {
		err = cerr
	}
	return got, err
}

// copyLog copies the valid prefix of a memtable or value log (logEnd). A
// log with no whole entry is left out: Badger would find nothing in it.
func copyLog(src, dst string) error {
	f, err := os.Open(src)
	if err != nil {
		return err
	}
	end, err := logEnd(f)
	f.Close()
	if err != nil {
		return err
	}
	if end <= logHeaderSize {
		return nil
	}
	// Badger truncates a memtable's log to zero before it deletes it once
	// the memtable is a table (which the copied manifest may lack).
	n, err := copyN(src, dst, end)
	if err == nil && n != end {
		err = fmt.Errorf("%w: log %s", errViewMoved, filepath.Base(src))
	}
	return err
}

// Badger's log format (memtable logs and value logs, badger v4's
// logFile): a 20-byte header, then entries of a header (meta byte, user
// meta byte, uvarint key length, uvarint value length, uvarint expiry),
// the key (with its 8-byte version), the value, and a big-endian
// CRC-32C of everything before it. Entries of a transaction carry bitTxn
// and end with an entry carrying bitFinTxn whose value is the version in
// decimal.
const (
	logHeaderSize = 20
	logBitTxn     = 1 << 6
	logBitFinTxn  = 1 << 7
	logMaxKey     = 1 << 16
)

var castagnoli = crc32.MakeTable(crc32.Castagnoli)

// logEnd returns the length of the prefix of a Badger log that Badger's
// replay applies (logFile.iterate): it stops at the first entry that is
// cut short, fails its checksum or has an empty key (the zeroed space a
// live log ends in), and counts a transaction only up to its end mark.
// It reads the log as a stream, never more than one entry past the end.
func logEnd(r io.Reader) (int64, error) {
	br := bufio.NewReaderSize(r, 1<<16)
	if _, err := io.CopyN(io.Discard, br, logHeaderSize); err != nil {
		return 0, nil
	}
	var (
		off, valid int64 = logHeaderSize, logHeaderSize
		txn        uint64
		key        []byte
		fin        [32]byte
	)
	for {
		h := crc32.New(castagnoli)
		hr := &hashByteReader{r: br, h: h}
		meta, err1 := hr.ReadByte()
		_, err2 := hr.ReadByte()
		klen, err3 := binary.ReadUvarint(hr)
		vlen, err4 := binary.ReadUvarint(hr)
		_, err5 := binary.ReadUvarint(hr)
		if err := errors.Join(err1, err2, err3, err4, err5); err != nil || klen > logMaxKey || klen == 0 {
			return valid, nil
		}
		hlen := hr.n
		key = slices.Grow(key[:0], int(klen))[:klen]
		if _, err := io.ReadFull(hr, key); err != nil {
			return valid, nil
		}
		isFin := meta&logBitFinTxn != 0 && meta&logBitTxn == 0
		var val []byte
		switch {
		case isFin && vlen <= uint64(len(fin)):
			val = fin[:vlen]
			if _, err := io.ReadFull(hr, val); err != nil {
				return valid, nil
			}
		case isFin:
			return valid, nil
		default:
			if n, err := io.CopyN(h, br, int64(vlen)); err != nil || n != int64(vlen) {
				return valid, nil
			}
		}
		var sum [4]byte
		if _, err := io.ReadFull(br, sum[:]); err != nil || binary.BigEndian.Uint32(sum[:]) != h.Sum32() {
			return valid, nil
		}
		off += int64(hlen) + int64(klen) + int64(vlen) + 4
		switch {
		case meta&logBitTxn != 0:
			ts := parseVersion(key)
			if txn == 0 {
				txn = ts
			}
			if txn != ts {
				return valid, nil
			}
		case isFin:
			ts, err := strconv.ParseUint(string(val), 10, 64)
			if err != nil || ts != txn {
				return valid, nil
			}
			txn, valid = 0, off
		default:
			if txn != 0 {
				return valid, nil
			}
			valid = off
		}
	}
}

// parseVersion is the version of a Badger key: its last 8 bytes hold
// MaxUint64 minus the version, big-endian (0 for a key too short).
func parseVersion(key []byte) uint64 {
	if len(key) <= 8 {
		return 0
	}
	return math.MaxUint64 - binary.BigEndian.Uint64(key[len(key)-8:])
}

// hashByteReader reads through to a checksum and counts the bytes read.
type hashByteReader struct {
	r   *bufio.Reader
	h   io.Writer
	n   int
	one [1]byte
}

func (r *hashByteReader) ReadByte() (byte, error) {
	b, err := r.r.ReadByte()
	if err == nil {
		r.one[0] = b
		r.h.Write(r.one[:])
		r.n++
	}
	return b, err
}

func (r *hashByteReader) Read(p []byte) (int, error) {
	n, err := r.r.Read(p)
	r.h.Write(p[:n])
	r.n += n
	return n, err
}
