package procio

import (
	"os"
	"path/filepath"
	"testing"
)

// TestWrites: writing a file of 1 MiB in 4 calls moves the counters by
// at least that (on Linux; elsewhere they stay 0).
func TestWrites(t *testing.T) {
	if _, err := os.Stat("/proc/self/io"); err != nil {
		t.Skip("no /proc/self/io here")
	}
	b0, c0 := Writes()
	f, err := os.Create(filepath.Join(t.TempDir(), "w"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	buf := make([]byte, 256<<10)
	for range 4 {
		if _, err := f.Write(buf); err != nil {
			t.Fatal(err)
		}
	}
	b1, c1 := Writes()
	if b1-b0 < 1<<20 || c1-c0 < 4 {
		t.Errorf("after writing 1 MiB in 4 calls: %d bytes, %d calls more", b1-b0, c1-c0)
	}
}
