//go:build unix

package spectrum

import (
	"syscall"
	"time"
)

// processCPU returns the process's user + system CPU time: on a shared
// machine it measures the work of a benchmark without the time spent
// waiting for a core.
func processCPU() time.Duration {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}
