package diag

import (
	"os"
	"os/exec"
	"runtime"
)

// runSelf runs the test binary again with args and a marker in the
// environment, for tests that need a fresh process.
func runSelf(exe string, args ...string) ([]byte, error) {
	cmd := exec.Command(exe, args...)
	cmd.Env = append(os.Environ(), "GLOWLOG_FIRST_ANALYSIS=1")
	return cmd.CombinedOutput()
}

type runtimeMemStats struct{ m runtime.MemStats }

func (s *runtimeMemStats) totalAlloc() uint64 {
	runtime.ReadMemStats(&s.m)
	return s.m.TotalAlloc
}
