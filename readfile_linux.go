package main

import (
	"fmt"
	"os"
	"syscall"
)

func readLimitedInto(buf []byte, name string, limit int64) ([]byte, error) {
	return readLimitedSys(buf, name, limit)
}

// readLimitedSys is readLimitedFile by system calls on the descriptor,
// without an os.File: open, fstat, read until end of file, close (a
// regular file read whole by one short read needs no read for its end). An
// os.File costs four fcntl calls and an epoll_ctl at open (to try the
// runtime's poller, which a regular file refuses), an allocation with a
// cleanup, and a lock per read, which glowlog analyze paid per file. The
// result, the limit and every error message are readLimitedFile's
// (TestReadLimitedSysMatchesFile). The descriptor is blocking, as
// os.File's is for a regular file; a pipe or a device blocks its
// goroutine's thread while it waits, which the runtime allows for.
func readLimitedSys(buf []byte, name string, limit int64) ([]byte, error) {
	var fd int
	var err error
	for {
		fd, err = syscall.Open(name, syscall.O_RDONLY|syscall.O_CLOEXEC, 0)
		if err != syscall.EINTR {
			break
		}
	}
	if err != nil {
		return nil, &os.PathError{Op: "open", Path: name, Err: err}
	}
	defer syscall.Close(fd)
	size := int64(512)
	whole := int64(-1) // a regular file's size, if it has one
	var st syscall.Stat_t
	if syscall.Fstat(fd, &st) == nil && st.Mode&syscall.S_IFMT == syscall.S_IFREG {
		size = min(st.Size, limit) + 1 // + 1: room to see EOF without growing
		if st.Size > 0 {
			whole = st.Size
		}
	}
	b := buf[:0]
	if int64(cap(b)) < size {
		b = make([]byte, 0, size)
	}
	left := limit + 1 // what io.LimitReader(f, limit+1) would still give
	for left > 0 {
		if len(b) == cap(b) {
			b = append(b, 0)[:len(b)]
		}
		p := b[len(b):cap(b)]
		if int64(len(p)) > left {
			p = p[:left]
		}
		n, err := syscall.Read(fd, p)
		if err == syscall.EINTR {
			continue
		}
		if err != nil {
			return nil, fmt.Errorf("%s: %v", name, &os.PathError{Op: "read", Path: name, Err: err})
		}
		if n == 0 {
			break
		}
		b = b[:len(b)+n]
		left -= int64(n)
		if n < len(p) && int64(len(b)) == whole {
			// A regular file gives less than asked only at its end:
			// here, at the size fstat reported, which saves the read
			// that would return 0. (Files that report another size
			// than they hold, as those of /proc and /sys, and files
			// that grew, are read on until a read returns 0.)
			break
		}
	}
	if int64(len(b)) > limit {
		return nil, fmt.Errorf("%s: file exceeds the %d-byte limit", name, limit)
	}
	return b, nil
}
