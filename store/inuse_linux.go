//go:build linux

package store

import (
	"errors"
	"fmt"
	"os"
	"syscall"
)

// fOFDGetLK is F_OFD_GETLK of <linux/fcntl.h>: unlike F_GETLK it also
// reports record locks held by this process.
const fOFDGetLK = 36

// fileInUse reports whether some connection has the SQLite database at
// path open: in WAL mode every open connection holds a read lock in
// SQLite's shared-lock byte range (PENDING_BYTE 0x40000000, then RESERVED
// and 510 SHARED bytes, src/os.h) for as long as it is open.
//
// Closing the probe's descriptor drops every POSIX lock this process
// holds on the file, so call it only from a process that does not have
// the database open through SQLite (the restore command).
func fileInUse(path string) (bool, error) {
	f, err := os.Open(path)
	if errors.Is(err, os.ErrNotExist) {
		return false, nil
	}
	if err != nil {
		return false, fmt.Errorf("store: %w", err)
	}
	defer f.Close()
	lk := syscall.Flock_t{Type: syscall.F_WRLCK, Whence: 0, Start: 0x40000000, Len: 512}
	if err := syscall.FcntlFlock(f.Fd(), fOFDGetLK, &lk); err != nil {
		// Kernels before 3.15: the classic probe (blind to this process).
		lk = syscall.Flock_t{Type: syscall.F_WRLCK, Whence: 0, Start: 0x40000000, Len: 512}
		if err := syscall.FcntlFlock(f.Fd(), syscall.F_GETLK, &lk); err != nil {
			return false, fmt.Errorf("store: probing the lock on %s: %w", path, err)
		}
	}
	return lk.Type != syscall.F_UNLCK, nil
}
