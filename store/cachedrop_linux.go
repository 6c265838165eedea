//go:build linux

package store

import (
	"os"

	"golang.org/x/sys/unix"
)

// cacheAdviceWorks: posix_fadvise drops clean cached pages here.
const cacheAdviceWorks = true

// adviseDontNeed flushes f's data (fdatasync) and advises
// POSIX_FADV_DONTNEED on n bytes of it from off. The advice drops only
// clean pages, and the range's pages were not all clean after the
// checkpoint (TestCheckpointDropsNewPagesFromCache found most still
// cached without the flush); the flush writes nothing twice: a later
// checkpoint's sync would write the same pages.
func adviseDontNeed(f *os.File, off, n int64) error {
	if err := unix.Fdatasync(int(f.Fd())); err != nil {
		return err
	}
	return unix.Fadvise(int(f.Fd()), off, n, unix.FADV_DONTNEED)
}
