package store

import (
	"errors"
	"fmt"
	"io/fs"
	"os"
)

// EnsurePrivate makes a database file readable and writable by its owner
// only (0600), whatever the umask: it creates path with mode 0600 when it
// does not exist and sets 0600 on path and on its -wal and -shm files
// where they exist. SQLite gives the -wal and -shm files it creates the
// mode of the database file, so calling this before opening keeps all
// three private. Backups should call it on the copy they write.
func EnsurePrivate(path string) error {
	f, err := os.OpenFile(path, os.O_RDONLY|os.O_CREATE, 0o600)
	if err != nil {
		return fmt.Errorf("store: %s: %w", path, err)
	}
	f.Close()
	for _, p := range []string{path, path + "-wal", path + "-shm"} {
		if err := os.Chmod(p, 0o600); err != nil && !errors.Is(err, fs.ErrNotExist) {
			return fmt.Errorf("store: making %s private: %w", p, err)
		}
	}
	return nil
}
