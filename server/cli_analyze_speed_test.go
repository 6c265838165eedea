package server

import (
	"bytes"
	"os"
	"path/filepath"
	"runtime/debug"
	"strings"
	"testing"
)

// TestReadLimitedIntoReuses: a file that fits is read into the buffer
// given, a larger one into new memory; the limit and its message are
// readLimited's.
func TestReadLimitedIntoReuses(t *testing.T) {
	dir := t.TempDir()
	small := filepath.Join(dir, "small.csv")
	big := filepath.Join(dir, "big.csv")
	if err := os.WriteFile(small, []byte("656.2,10\n656.3,11\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(big, bytes.Repeat([]byte("656.2,10\n"), 1000), 0o644); err != nil {
		t.Fatal(err)
	}
	buf := make([]byte, 0, 4096)
	b, err := readLimitedInto(buf, small, 1<<20)
	if err != nil || string(b) != "656.2,10\n656.3,11\n" {
		t.Fatalf("read %q, %v", b, err)
	}
	if &b[0] != &buf[:1][0] {
		t.Error("a file that fits was not read into the buffer given")
	}
	b, err = readLimitedInto(b, big, 1<<20)
	if err != nil || len(b) != 9000 || !bytes.HasPrefix(b, []byte("656.2,10\n656.2")) {
		t.Fatalf("read %d bytes, %v", len(b), err)
	}
	_, err = readLimitedInto(b, big, 8999)
	_, err2 := readLimited(big, 8999)
	if err == nil || err2 == nil || err.Error() != err2.Error() || !strings.Contains(err.Error(), "file exceeds the 8999-byte limit") {
		t.Errorf("over the limit: %v; readLimited: %v", err, err2)
	}
	if _, err := readLimitedInto(b, big, 9000); err != nil {
		t.Errorf("exactly at the limit: %v", err)
	}
}

// TestAnalyzeBatchBufferReuse: in a batch whose files share read buffers
// (large, small, a measurement set, large again), every record is the one
// the file gets on its own.
func TestAnalyzeBatchBufferReuse(t *testing.T) {
	files := []string{
		filepath.Join(spectraDir, "scipy_hbeta_window_snr100.csv"),
		filepath.Join(spectraDir, "scipy_bench_2048.csv"),
		filepath.Join("..", "testdata", "example_hbeta.json"),
		filepath.Join(spectraDir, "scipy_wide_snr100.csv"),
		filepath.Join(spectraDir, "scipy_halpha_window_snr100.csv"),
	}
	run := func(args ...string) []string {
		var out, errb bytes.Buffer
		if code := AnalyzeCommand(args, nil, &out, &errb); code != ExitOK {
			t.Fatalf("analyze %v: exit %d: %s", args, code, errb.String())
		}
		return strings.Split(strings.TrimSuffix(out.String(), "\n"), "\n")
	}
	batch := run(files...)
	if len(batch) != len(files) {
		t.Fatalf("%d records for %d files", len(batch), len(files))
	}
	for i, f := range files {
		alone := run(f, f)[0] // a batch of two: the same compact form
		if batch[i] != alone {
			t.Errorf("%s: the record in the batch differs from the file's own", f)
		}
	}
}

// TestAnalyzeBatchRestoresGC: a batch collects garbage less often while it
// runs, and gives the process its setting back.
func TestAnalyzeBatchRestoresGC(t *testing.T) {
	if os.Getenv("GOGC") != "" {
		t.Skip("GOGC set: the batch leaves the collector alone")
	}
	old := debug.SetGCPercent(123)
	defer debug.SetGCPercent(old)
	f := filepath.Join(spectraDir, "scipy_bench_2048.csv")
	var out, errb bytes.Buffer
	if code := AnalyzeCommand([]string{f, f}, nil, &out, &errb); code != ExitOK {
		t.Fatalf("exit %d: %s", code, errb.String())
	}
	if now := debug.SetGCPercent(123); now != 123 {
		t.Errorf("GC percent after a batch = %d, want 123 as before", now)
	}
}
