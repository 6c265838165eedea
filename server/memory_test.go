package server

import (
	"runtime/debug"
	"testing"
)

// TestServeMemoryLimit: serve sets its soft heap limit, and leaves one
// given by GOMEMLIMIT alone.
func TestServeMemoryLimit(t *testing.T) {
	before := debug.SetMemoryLimit(-1)
	t.Cleanup(func() { debug.SetMemoryLimit(before) })
	t.Setenv("GOMEMLIMIT", "")
	if got := SetMemoryLimit(); got != MemoryLimit {
		t.Fatalf("limit %d, want %d", got, MemoryLimit)
	}
	debug.SetMemoryLimit(300 << 20)
	t.Setenv("GOMEMLIMIT", "300MiB")
	if got := SetMemoryLimit(); got != 300<<20 {
		t.Fatalf("with GOMEMLIMIT set: limit %d, want it untouched (%d)", got, 300<<20)
	}
}
