//go:build linux || darwin || freebsd || netbsd || openbsd || dragonfly

package main

import (
	"errors"
	"fmt"
	"os"
	"syscall"
)

// lockState takes an exclusive lock beside the state file (path.lock), so
// that two watchers never share one state file and send a file twice.
func lockState(path string) (*os.File, error) {
	f, err := os.OpenFile(path+".lock", os.O_CREATE|os.O_RDWR, 0o644)
	if err != nil {
		return nil, err
	}
	if err := syscall.Flock(int(f.Fd()), syscall.LOCK_EX|syscall.LOCK_NB); err != nil {
		f.Close()
		if errors.Is(err, syscall.EWOULDBLOCK) {
			return nil, fmt.Errorf("another glowlog watch is using the state file %s: stop it first (two watchers would send files twice)", path)
		}
		return nil, fmt.Errorf("locking %s.lock: %v", path, err)
	}
	return f, nil
}
