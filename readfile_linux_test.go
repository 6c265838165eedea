package main

import (
	"bytes"
	"fmt"
	"os"
	"path/filepath"
	"syscall"
	"testing"
)

// TestReadLimitedSysMatchesFile: the system-call reader gives
// readLimitedFile's bytes and error messages: small and large files
// (into a buffer too small and one large enough), at and over the
// limit, an empty file, a missing file, a directory and a device.
func TestReadLimitedSysMatchesFile(t *testing.T) {
	dir := t.TempDir()
	write := func(name string, b []byte) string {
		p := filepath.Join(dir, name)
		if err := os.WriteFile(p, b, 0o644); err != nil {
			t.Fatal(err)
		}
		return p
	}
	small := write("small.csv", []byte("656.2,10\n656.3,11\n"))
	big := write("big.csv", bytes.Repeat([]byte("656.2,10\n"), 5000))
	empty := write("empty.csv", nil)
	cases := []struct {
		name  string
		limit int64
	}{
		{small, 1 << 20}, {small, 18}, {small, 17}, {small, 0},
		{big, 1 << 20}, {big, 45000}, {big, 44999}, {big, 600},
		{empty, 1 << 20}, {empty, 0},
		{filepath.Join(dir, "missing.csv"), 1 << 20}, {dir, 1 << 20},
		{"/dev/null", 1 << 20}, {"/dev/zero", 100000},
	}
	// Regular files whose size (0 or a page) is not what they hold, read
	// in short pieces (those that exist here).
	for _, f := range []string{"/proc/version", "/proc/self/cmdline", "/proc/kallsyms", "/sys/kernel/mm/transparent_hugepage/enabled"} {
		if _, err := os.Stat(f); err == nil {
			cases = append(cases, struct {
				name  string
				limit int64
			}{f, 64 << 20})
		}
	}
	for _, c := range cases {
		for _, bufCap := range []int{0, 64, 1 << 16} {
			label := fmt.Sprintf("%s limit %d buffer %d", c.name, c.limit, bufCap)
			want, wantErr := readLimitedFile(make([]byte, 0, bufCap), c.name, c.limit)
			got, gotErr := readLimitedSys(make([]byte, 0, bufCap), c.name, c.limit)
			if (wantErr == nil) != (gotErr == nil) || wantErr != nil && wantErr.Error() != gotErr.Error() {
				t.Errorf("%s: error %v, want %v", label, gotErr, wantErr)
				continue
			}
			if !bytes.Equal(got, want) {
				t.Errorf("%s: read %d bytes, want %d", label, len(got), len(want))
			}
		}
	}
	// A named pipe: read until its writer closes it.
	fifo := filepath.Join(dir, "fifo")
	if err := syscall.Mkfifo(fifo, 0o644); err != nil {
		t.Fatal(err)
	}
	data := bytes.Repeat([]byte("656.2,10\n"), 2000)
	for _, read := range []func([]byte, string, int64) ([]byte, error){readLimitedFile, readLimitedSys} {
		done := make(chan error, 1)
		go func() { done <- os.WriteFile(fifo, data, 0o644) }()
		got, err := read(nil, fifo, 1<<20)
		if werr := <-done; werr != nil {
			t.Fatal(werr)
		}
		if err != nil || !bytes.Equal(got, data) {
			t.Errorf("fifo: read %d bytes, %v; want %d", len(got), err, len(data))
		}
	}
	// The error texts are os.Open's and os.File.Read's.
	if _, err := readLimitedSys(nil, filepath.Join(dir, "missing.csv"), 10); err == nil || err.Error() != "open "+filepath.Join(dir, "missing.csv")+": no such file or directory" {
		t.Errorf("missing file: %v", err)
	}
	if _, err := readLimitedSys(nil, dir, 10); err == nil || err.Error() != dir+": read "+dir+": is a directory" {
		t.Errorf("directory: %v", err)
	}
	if _, err := readLimitedSys(nil, "/dev/zero", 100000); err == nil || err.Error() != "/dev/zero: file exceeds the 100000-byte limit" {
		t.Errorf("/dev/zero: %v", err)
	}
}
