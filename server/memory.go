package server

import (
	"os"
	"runtime/debug"
)

// MemoryLimit is the web server's soft limit of the Go heap (unless GOMEMLIMIT
// is set): near it the garbage collector runs more often instead of
// letting the heap grow to twice what is live, so that a server with a
// million runs (a cached trend of all of them is about 90 MB) stays within
// 250 MB resident. It is soft: a heap that needs more gets more.
const MemoryLimit = 170 << 20

// SetMemoryLimit applies MemoryLimit unless the environment
// sets GOMEMLIMIT, and returns the limit in force.
func SetMemoryLimit() int64 {
	if os.Getenv("GOMEMLIMIT") == "" {
		debug.SetMemoryLimit(MemoryLimit)
	}
	return debug.SetMemoryLimit(-1)
}
