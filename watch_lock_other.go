//go:build !(linux || darwin || freebsd || netbsd || openbsd || dragonfly)

package main

import "os"

// lockState is not available here: run one watcher per state file.
func lockState(path string) (*os.File, error) { return nil, nil }
