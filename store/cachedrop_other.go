//go:build !linux

package store

import "os"

// cacheAdviceWorks: no advice on this system (the cache grows as the
// kernel sees fit).
const cacheAdviceWorks = false

func adviseDontNeed(f *os.File, off, n int64) error { return nil }
