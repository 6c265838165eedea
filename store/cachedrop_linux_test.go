//go:build linux

package store

import (
	"bytes"
	"context"
	"os"
	"path/filepath"
	"syscall"
	"testing"
	"time"
	"unsafe"

	"golang.org/x/sys/unix"
)

// TestCheckpointDropsNewPagesFromCache: after the background checkpoints
// the pages of the file's grown part, but its newest keep bytes, are out
// of the page cache; what was there at Open is never advised; every blob
// reads back as written, before and after reopening.
func TestCheckpointDropsNewPagesFromCache(t *testing.T) {
	ctx := context.Background()
	path := filepath.Join(t.TempDir(), "cache.db")
	d, err := Open(ctx, path)
	if err != nil {
		t.Fatal(err)
	}
	from0 := d.cache.from
	d.cache.keep.Store(1 << 20)
	if _, err := d.wdb.ExecContext(ctx, `CREATE TABLE blobs(id INTEGER PRIMARY KEY, b BLOB NOT NULL)`); err != nil {
		t.Fatal(err)
	}
	blob := func(i int) []byte { return bytes.Repeat([]byte{byte(i), byte(i >> 8), 0x5a}, 30000) }
	const n = 200 // ~18 MB
	for i := range n {
		if _, err := d.wdb.ExecContext(ctx, `INSERT INTO blobs(id, b) VALUES (?, ?)`, i, blob(i)); err != nil {
			t.Fatal(err)
		}
		d.afterCommit()
	}
	// The background checkpointer copies the WAL and advises; wait for
	// it to have dropped at least all but the last 8 MB.
	deadline := time.Now().Add(20 * time.Second)
	for {
		fi, err := os.Stat(path)
		if err != nil {
			t.Fatal(err)
		}
		if got := d.cache.dropped.Load(); got > from0 && got >= fi.Size()-8<<20 {
			break
		}
		if time.Now().After(deadline) {
			t.Fatalf("dropped up to %d of %d bytes (from %d)", d.cache.dropped.Load(), fi.Size(), from0)
		}
		d.afterCommit()
		time.Sleep(20 * time.Millisecond)
	}
	end := d.cache.dropped.Load()
	if res := resident(t, d.cache.f, from0, end); res > (end-from0)/20 {
		t.Errorf("%d of %d advised bytes still cached", res, end-from0)
	}
	check := func(d *DB) {
		t.Helper()
		rows, err := d.db.QueryContext(ctx, `SELECT id, b FROM blobs ORDER BY id`)
		if err != nil {
			t.Fatal(err)
		}
		defer rows.Close()
		k := 0
		for ; rows.Next(); k++ {
			var id int
			var b []byte
			if err := rows.Scan(&id, &b); err != nil {
				t.Fatal(err)
			}
			if id != k || !bytes.Equal(b, blob(k)) {
				t.Fatalf("blob %d (id %d) differs", k, id)
			}
		}
		if err := rows.Err(); err != nil || k != n {
			t.Fatalf("%d blobs, %v", k, err)
		}
	}
	check(d)
	if err := d.Close(); err != nil {
		t.Fatal(err)
	}
	if d.cache.f != nil {
		t.Error("Close left the cache file open")
	}
	d, err = Open(ctx, path)
	if err != nil {
		t.Fatal(err)
	}
	defer d.Close()
	fi, err := os.Stat(path)
	if err != nil {
		t.Fatal(err)
	}
	if d.cache.from != fi.Size() {
		t.Errorf("reopened: advice from %d, want the file's size %d", d.cache.from, fi.Size())
	}
	check(d)
}

// resident is the number of bytes of f's [off, end) in the page cache.
// (f is the DB's own descriptor: closing another one would drop the
// process's SQLite locks on the file.)
func resident(t *testing.T, f *os.File, off, end int64) int64 {
	t.Helper()
	ps := int64(os.Getpagesize())
	off = (off + ps - 1) / ps * ps
	end = end / ps * ps
	if end <= off {
		return 0
	}
	m, err := unix.Mmap(int(f.Fd()), off, int(end-off), unix.PROT_READ, unix.MAP_SHARED)
	if err != nil {
		t.Fatal(err)
	}
	defer unix.Munmap(m)
	vec := make([]byte, (end-off)/ps)
	if _, _, e := syscall.Syscall(syscall.SYS_MINCORE, uintptr(unsafe.Pointer(&m[0])), uintptr(len(m)), uintptr(unsafe.Pointer(&vec[0]))); e != 0 {
		t.Fatal(e)
	}
	var n int64
	for _, v := range vec {
		if v&1 != 0 {
			n += ps
		}
	}
	return n
}
