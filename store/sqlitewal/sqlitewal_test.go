package sqlitewal

import (
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// The files in testdata were written by real SQLite (modernc), see
// store/walseed_test.go.

func copyT(t testing.TB, src, dst string) {
	t.Helper()
	b, err := os.ReadFile(src)
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(dst, b, 0o600); err != nil {
		t.Fatal(err)
	}
}

// TestCheckPairs: the genuine pair passes; the other database's WAL, a WAL
// beside a missing file and a WAL beside a backup are refused with the
// reason; damaged WALs hold no committed frames and pass.
func TestCheckPairs(t *testing.T) {
	dir := t.TempDir()
	db := filepath.Join(dir, "x.db")
	setup := func(dbSrc, walSrc string) {
		t.Helper()
		os.Remove(db)
		os.Remove(db + "-wal")
		if dbSrc != "" {
			copyT(t, filepath.Join("testdata", dbSrc), db)
		}
		if walSrc != "" {
			copyT(t, filepath.Join("testdata", walSrc), db+"-wal")
		}
	}
	setup("pair.db", "pair.db-wal")
	if err := Check(db); err != nil {
		t.Fatalf("genuine pair: %v", err)
	}
	setup("pair.db", "")
	if err := Check(db); err != nil {
		t.Fatalf("no WAL: %v", err)
	}
	for _, c := range []struct{ db, wal, reason string }{
		{"pair.db", "other.db-wal", "file identity"},
		{"", "pair.db-wal", "missing"},
		{"backup.db", "pair.db-wal", "rollback-journal mode"},
	} {
		setup(c.db, c.wal)
		err := Check(db)
		var e *Error
		if !errors.As(err, &e) || !strings.Contains(e.Reason, c.reason) {
			t.Errorf("%s + %s: %v, want a reason with %q", c.db, c.wal, err, c.reason)
		}
	}
}

// TestReadWALChecksums: a damaged frame ends the valid frames there, a
// damaged header leaves none.
func TestReadWALChecksums(t *testing.T) {
	src := filepath.Join("testdata", "pair.db-wal")
	full, err := ReadWAL(src)
	if err != nil {
		t.Fatal(err)
	}
	if full.Commits < 3 || full.PageSize != 4096 || len(full.Page1) == 0 {
		t.Fatalf("seed WAL: %+v", full)
	}
	b, _ := os.ReadFile(src)
	p := filepath.Join(t.TempDir(), "x-wal")
	frame := walFrameHdr + int(full.PageSize)
	bad := append([]byte(nil), b...)
	bad[walHdrSize+2*frame+walFrameHdr+100] ^= 0x01 // third frame's page
	os.WriteFile(p, bad, 0o600)
	if w, _ := ReadWAL(p); w.Commits > 2 {
		t.Fatalf("damaged third frame: %d committed frames", w.Commits)
	}
	bad = append([]byte(nil), b...)
	bad[17] ^= 0x01 // salt-1: the header checksum no longer holds
	os.WriteFile(p, bad, 0o600)
	if w, _ := ReadWAL(p); w.Commits != 0 {
		t.Fatalf("damaged header: %d committed frames", w.Commits)
	}
	os.WriteFile(p, b[:len(b)-10], 0o600) // torn last frame
	if w, _ := ReadWAL(p); w.Commits >= full.Commits {
		t.Fatalf("torn last frame still committed: %d of %d", w.Commits, full.Commits)
	}
}

// FuzzReadWAL: any bytes as a WAL and as a database file are read without
// panicking, and never yield more committed frames than the file holds.
func FuzzReadWAL(f *testing.F) {
	seed, err := os.ReadFile(filepath.Join("testdata", "pair.db-wal"))
	if err != nil {
		f.Fatal(err)
	}
	f.Add(seed)
	f.Add(seed[:32+4120])
	f.Add([]byte{})
	f.Fuzz(func(t *testing.T, b []byte) {
		p := filepath.Join(t.TempDir(), "x.db")
		os.WriteFile(p+"-wal", b, 0o600)
		os.WriteFile(p, b, 0o600)
		w, err := ReadWAL(p + "-wal")
		if err != nil {
			t.Fatal(err)
		}
		if w.Commits > 0 && (w.PageSize < 512 || w.Commits*(walFrameHdr+int(w.PageSize))+walHdrSize > len(b)) {
			t.Fatalf("%d committed frames of %d bytes in %d bytes", w.Commits, w.PageSize, len(b))
		}
		Check(p)
	})
}
