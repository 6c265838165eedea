package store

import (
	"os"
	"sync/atomic"
)

// The page cache of the database file's newly written part.
//
// Each checkpoint copies pages from the WAL into the database file, which
// under bulk writes grows by ~70 kB per spectrum. Every new page of the
// file's cache takes a page frame the kernel has not used before, while
// the WAL's writes land again and again in the same frames (the WAL starts
// over). On a virtual machine whose host backs guest memory on first touch
// (the benchmark machine: ~20 GB free, so the kernel never reuses a
// frame), that first touch made the checkpoint's copy several times the
// cost of the WAL's: ~10 % of bulk reanalysis's CPU was the kernel's copy
// into the database file's cache (perf: copy_folio_from_iter_atomic under
// the checkpoint's pwrite), against ~5 % once the frames are reused.
//
// After each background checkpoint the checkpointer therefore advises the
// kernel (posix_fadvise DONTNEED, dropCache) that the part of the file
// grown since Open is not needed, except its newest cacheKeep bytes: the
// checkpoint synced those pages, so the kernel drops them and the next
// copies reuse their frames. Reads of older new pages come from the disk
// (and are cached again); the newest cacheKeep bytes (the runs written
// last, which the pages after an upload read) stay cached, and so does
// everything the file held at Open. Only clean cached copies are dropped:
// what is stored, and when it is durable, does not change (a dirty page,
// were there one, is only queued for writeback, never dropped).
const (
	// cacheKeep is the newest part of the grown file kept in the cache.
	cacheKeep = 32 << 20
	// cacheDropStep is the least the advice covers at a time.
	cacheDropStep = 4 << 20
)

// cacheDropper is the checkpointer's state for dropCache.
type cacheDropper struct {
	f    *os.File     // the database file, open until Close (see closeCacheFile)
	from int64        // the file's size at Open, then the end of the last advice
	keep atomic.Int64 // cacheKeep (tests set less, while the checkpointer runs)
	// dropped is the end of the last advice (tests).
	dropped atomic.Int64
}

// openCacheFile opens the database file for dropCache. Only Close closes
// it, after SQLite's connections: closing a descriptor of the file drops
// every POSIX lock this process holds on it, SQLite's included (see
// fileInUse).
func (d *DB) openCacheFile() {
	if d.path == ":memory:" || !cacheAdviceWorks {
		return
	}
	f, err := os.Open(d.path)
	if err != nil {
		return // no advice: the cache grows as it did before
	}
	fi, err := f.Stat()
	if err != nil {
		d.cache.f = f // closed by Close all the same
		return
	}
	d.cache.f, d.cache.from = f, fi.Size()
	d.cache.keep.Store(cacheKeep)
}

// dropCache advises the kernel to drop the cached pages of the file's
// part grown since Open, but its newest keep bytes (the background
// checkpointer calls it after each checkpoint).
func (d *DB) dropCache() {
	c := &d.cache
	keep := c.keep.Load()
	if c.f == nil || keep == 0 {
		return
	}
	fi, err := c.f.Stat()
	if err != nil {
		return
	}
	end := fi.Size() - keep
	if end-c.from < cacheDropStep {
		return
	}
	if adviseDontNeed(c.f, c.from, end-c.from) == nil {
		c.from = end
		c.dropped.Store(end)
	}
}

// closeCacheFile closes the descriptor of dropCache (Close, after
// SQLite's connections).
func (d *DB) closeCacheFile() {
	if d.cache.f != nil {
		d.cache.f.Close()
		d.cache.f = nil
	}
}
