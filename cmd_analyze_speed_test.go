package main

import (
	"bytes"
	"errors"
	"os"
	"path/filepath"
	"runtime"
	"runtime/debug"
	"slices"
	"strings"
	"sync"
	"testing"
	"time"
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
		filepath.Join("testdata", "example_hbeta.json"),
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

// TestAnalyzeBatchRestoresGC: a batch leaves the collector's setting as
// it was (it runs with the process's own).
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

// failingWriter accepts n writes, then fails.
type failingWriter struct {
	n      int
	writes int
}

func (w *failingWriter) Write(p []byte) (int, error) {
	w.writes++
	if w.writes > w.n {
		return 0, errors.New("disk full")
	}
	return len(p), nil
}

// TestAnalyzeBatchStreams: records are written as the files are done, in
// order; a failed write ends the batch with status 1 and its message
// after the others, and leaves no worker behind.
func TestAnalyzeBatchStreams(t *testing.T) {
	f := filepath.Join(spectraDir, "scipy_bench_2048.csv")
	files := make([]string, 40)
	for i := range files {
		files[i] = f
	}
	args := append([]string{"--instrument-fwhm-nm", "0.35", "--gas-temperature-K", "1000", "--max-upper", "6", "--model", "lines", "missing.csv"}, files...)
	before := runtime.NumGoroutine()
	w := &failingWriter{n: 2}
	var errb bytes.Buffer
	if code := AnalyzeCommand(args, nil, w, &errb); code != ExitError {
		t.Fatalf("exit %d, want 1 (write failed): %s", code, errb.String())
	}
	if w.writes != 3 {
		t.Errorf("%d writes, want 3 (two records, then the failed one ends the batch)", w.writes)
	}
	msgs := strings.Split(strings.TrimSpace(errb.String()), "\n")
	if len(msgs) != 2 || !strings.Contains(msgs[0], "missing.csv") || !strings.Contains(msgs[1], "writing output: disk full") {
		t.Errorf("stderr %q: want the missing file's message, then the write failure", errb.String())
	}
	// The workers stop after their current file.
	deadline := time.Now().Add(5 * time.Second)
	for runtime.NumGoroutine() > before && time.Now().Before(deadline) {
		time.Sleep(10 * time.Millisecond)
	}
	if n := runtime.NumGoroutine(); n > before {
		t.Errorf("%d goroutines after the batch, %d before", n, before)
	}
}

// orderLog records which of two writers was written, in order.
type orderLog struct {
	mu  sync.Mutex
	seq []string
}

type loggedWriter struct {
	log  *orderLog
	name string
}

func (w loggedWriter) Write(p []byte) (int, error) {
	w.log.mu.Lock()
	defer w.log.mu.Unlock()
	w.log.seq = append(w.log.seq, w.name)
	return len(p), nil
}

// TestAnalyzeProgressBeforeRecords: with a progress line, the records are
// written after it has finished (as one block, not between its updates).
func TestAnalyzeProgressBeforeRecords(t *testing.T) {
	f := filepath.Join(spectraDir, "scipy_hbeta_window_snr100.csv")
	var log orderLog
	args := []string{"--progress", "always", f, f, f, f}
	if code := AnalyzeCommand(args, nil, loggedWriter{&log, "out"}, loggedWriter{&log, "err"}); code != ExitOK {
		t.Fatalf("exit %d", code)
	}
	first := slices.Index(log.seq, "out")
	if first < 0 || slices.Contains(log.seq[first:], "err") || !slices.Contains(log.seq[:first], "err") {
		t.Errorf("writes %v: want the progress line's, then the records'", log.seq)
	}
}
