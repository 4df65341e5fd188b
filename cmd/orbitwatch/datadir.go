package main

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"

	badger "github.com/dgraph-io/badger/v4"

	"orbitwatch/storage"
)

// storeDir is the folder that holds the counting store in a directory
// given to serve or demo --data (beside it: nats/, the embedded server's
// store, and nats-user.nk). backfill and worker write the store in --data
// itself.
const storeDir = "state"

// resolveData returns the store directory for a --data dir as the user
// gave it to any command: dir itself when it holds a Badger store (the
// --data of backfill or worker), else dir/state when that does (the --data
// of serve or demo), else dir, for the opener to say what is wrong.
func resolveData(dir string) string {
	if isStore(dir) {
		return dir
	}
	if sub := filepath.Join(dir, storeDir); isStore(sub) {
		return sub
	}
	return dir
}

func isStore(dir string) bool {
	_, err := os.Stat(filepath.Join(dir, badger.ManifestFilename))
	return err == nil
}

// openData opens the store of a --data dir read-only (see resolveData:
// a serve or demo directory as well as a backfill or worker one) and
// checks that it holds a checkpoint. A missing directory, one that is not
// an orbitwatch store, or a corrupt one is an error; nothing is written
// to it. Every offline command opens its data this way.
func openData(dir string) (*storage.Store, error) {
	if _, err := os.Stat(dir); errors.Is(err, os.ErrNotExist) {
		return nil, fmt.Errorf("data directory %s: no such file or directory", dir)
	}
	st, err := storage.OpenReadOnly(resolveData(dir))
	if err != nil {
		return nil, err
	}
	if len(st.Checkpoints()) == 0 {
		st.Close()
		return nil, fmt.Errorf("data directory %s holds no complete checkpoint", dir)
	}
	return st, nil
}
