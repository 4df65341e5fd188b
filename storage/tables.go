package storage

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strings"

	badger "github.com/dgraph-io/badger/v4"
	"github.com/dgraph-io/badger/v4/table"
	"github.com/dgraph-io/ristretto/v2/z"
)

// checkTables opens every table the manifest of dir lists the way Badger
// will, but in this goroutine and under recover: Badger opens tables in
// goroutines of its own, where a truncated or overwritten table panics the
// whole process. It reads each table's footer, index and first and last
// blocks, not the whole file. Table files the manifest does not list (left
// by a crash during a flush or compaction) are Badger's to clean up.
func checkTables(dir string, opts badger.Options) error {
	fp, err := os.Open(filepath.Join(dir, badger.ManifestFilename))
	if errors.Is(err, os.ErrNotExist) {
		return nil
	}
	if err != nil {
		return err
	}
	defer fp.Close()
	mf, _, err := badger.ReplayManifestFile(fp, opts.ExternalMagicVersion, opts)
	if err != nil {
		return fmt.Errorf("damaged Badger manifest: %w", err)
	}
	for id, tm := range mf.Tables {
		topts := table.Options{
			ReadOnly:    true,
			BlockSize:   opts.BlockSize,
			Compression: tm.Compression,
			ChkMode:     opts.ChecksumVerificationMode,
		}
		path := table.NewFilename(id, dir)
		if err := checkTable(path, topts); err != nil {
			return fmt.Errorf("damaged Badger table %s: %w", filepath.Base(path), err)
		}
	}
	return nil
}

func checkTable(path string, topts table.Options) (err error) {
	mf, err := z.OpenMmapFile(path, os.O_RDONLY, 0)
	if err != nil {
		return err
	}
	defer func() {
		if p := recover(); p != nil {
			err = fmt.Errorf("unreadable (Badger panicked: %s)", oneLine(fmt.Sprint(p), 160))
		}
		mf.Close(-1)
	}()
	_, err = table.OpenTable(mf, topts)
	return err
}

// oneLine joins s's words with single spaces and cuts it to at most n bytes.
func oneLine(s string, n int) string {
	s = strings.Join(strings.Fields(s), " ")
	if len(s) > n {
		s = s[:n] + "…"
	}
	return s
}
