package store

import (
	"context"
	"database/sql"
	"fmt"
	"path/filepath"
	"testing"
	"time"
)

// createWithPageSize makes an empty WAL database at path with the given
// page size, as an older glowlog (SQLite's default 4 KiB) left it.
func createWithPageSize(t testing.TB, path string, pageSize int) {
	t.Helper()
	sdb, err := sql.Open("sqlite", "file:"+path)
	if err != nil {
		t.Fatal(err)
	}
	defer sdb.Close()
	conn, err := sdb.Conn(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	defer conn.Close()
	for _, q := range []string{fmt.Sprintf(`PRAGMA page_size = %d`, pageSize), `PRAGMA journal_mode = WAL`,
		`CREATE TABLE older_file (x INTEGER) STRICT`} {
		if _, err := conn.ExecContext(context.Background(), q); err != nil {
			t.Fatal(err)
		}
	}
}

// filePageSize reads the page size of the database file at path (header
// bytes 16–17, 1 meaning 65536) once nothing has it open.
func filePageSize(t *testing.T, path string) int {
	t.Helper()
	sdb, err := sql.Open("sqlite", "file:"+path+"?mode=ro")
	if err != nil {
		t.Fatal(err)
	}
	defer sdb.Close()
	var ps int
	if err := sdb.QueryRow(`PRAGMA page_size`).Scan(&ps); err != nil {
		t.Fatal(err)
	}
	return ps
}

// TestPageSize: Open gives a new file newPageSize; a file with another
// page size (an older glowlog's 4 KiB) keeps it, migrates, stores and
// reads runs and files, and reopens; a backup keeps its source's page
// size.
func TestPageSize(t *testing.T) {
	ctx := context.Background()
	for _, tc := range []struct {
		name  string
		older int // page size of a file made before Open; 0 for none
		want  int
	}{{"new", 0, newPageSize}, {"older 4096", 4096, 4096}, {"older 8192", 8192, 8192}} {
		t.Run(tc.name, func(t *testing.T) {
			dir := t.TempDir()
			path := filepath.Join(dir, "ps.db")
			if tc.older != 0 {
				createWithPageSize(t, path, tc.older)
			}
			d, err := Open(ctx, path)
			if err != nil {
				t.Fatal(err)
			}
			if d.pageSize != int64(tc.want) {
				t.Errorf("page size %d, want %d", d.pageSize, tc.want)
			}
			u, err := d.CreateUser(ctx, "op", RoleOperator, "x")
			if err != nil {
				t.Fatal(err)
			}
			run, err := d.CreateRun(ctx, u.ID, RunInput{Title: "ps", StartedAt: time.Date(2026, 1, 1, 0, 0, 0, 0, time.UTC), SourceType: "microwave"})
			if err != nil {
				t.Fatal(err)
			}
			blob := make([]byte, 100<<10)
			for i := range blob {
				blob[i] = byte(i * 7)
			}
			for k := range 30 {
				if err := d.InGroupTx(ctx, func(tx *sql.Tx) error {
					_, err := d.AddAttachmentTx(ctx, tx, run, KindSpectrum, fmt.Sprintf("f%02d.csv", k), blob)
					return err
				}); err != nil {
					t.Fatal(err)
				}
			}
			backup := filepath.Join(dir, "ps-backup.db")
			if _, err := d.Backup(ctx, backup, false); err != nil {
				t.Fatal(err)
			}
			if err := d.Close(); err != nil {
				t.Fatal(err)
			}
			if ps := filePageSize(t, path); ps != tc.want {
				t.Errorf("file page size %d after close, want %d", ps, tc.want)
			}
			if ps := filePageSize(t, backup); ps != tc.want {
				t.Errorf("backup page size %d, want %d", ps, tc.want)
			}
			d, err = Open(ctx, path)
			if err != nil {
				t.Fatal(err)
			}
			defer d.Close()
			if d.pageSize != int64(tc.want) {
				t.Errorf("page size %d after reopen, want %d", d.pageSize, tc.want)
			}
			atts, err := d.Attachments(ctx, run)
			if err != nil || len(atts) != 30 {
				t.Fatalf("after reopen: %d files (want 30), %v", len(atts), err)
			}
			a, err := d.AttachmentContent(ctx, atts[29].ID)
			if err != nil || string(a.Content) != string(blob) {
				t.Fatalf("after reopen: content differs (%d bytes), %v", len(a.Content), err)
			}
		})
	}
}

// TestWriteConnectionJournalsInMemory: the write connection keeps its
// statement and savepoint journals in memory (temp_store 2, Open), the
// read pool the default; a group commit's savepoint still rolls back one
// upload and keeps the others.
func TestWriteConnectionJournalsInMemory(t *testing.T) {
	ctx := context.Background()
	d, err := Open(ctx, filepath.Join(t.TempDir(), "ts.db"))
	if err != nil {
		t.Fatal(err)
	}
	defer d.Close()
	var w, r int
	if err := d.wdb.QueryRowContext(ctx, `PRAGMA temp_store`).Scan(&w); err != nil {
		t.Fatal(err)
	}
	if err := d.db.QueryRowContext(ctx, `PRAGMA temp_store`).Scan(&r); err != nil {
		t.Fatal(err)
	}
	if w != 2 || r != 0 {
		t.Errorf("temp_store: write connection %d (want 2), read pool %d (want 0)", w, r)
	}
}
