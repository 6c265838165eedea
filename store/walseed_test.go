package store

import (
	"context"
	"database/sql"
	"os"
	"path/filepath"
	"testing"
)

// TestWriteWALSeeds writes the small database/WAL files that package
// sqlitewal tests with (it links no SQLite, so that its fuzzing is fast):
//
//	GLOWLOG_WRITE_WAL_SEEDS=1 go test ./store/ -run TestWriteWALSeeds
//
// pair.db + pair.db-wal: a database and its WAL as a killed process
// leaves them; other.db-wal: the WAL of another database; backup.db: a
// VACUUM INTO copy of pair.db (rollback-journal mode).
func TestWriteWALSeeds(t *testing.T) {
	if os.Getenv("GLOWLOG_WRITE_WAL_SEEDS") == "" {
		t.Skip("set GLOWLOG_WRITE_WAL_SEEDS=1 to rewrite sqlitewal/testdata")
	}
	ctx := context.Background()
	out := filepath.Join("sqlitewal", "testdata")
	dir := t.TempDir()
	mk := func(name string, rows int) (*sql.DB, string) {
		p := filepath.Join(dir, name)
		db, err := sql.Open("sqlite", "file:"+p+"?_pragma=journal_mode(WAL)")
		if err != nil {
			t.Fatal(err)
		}
		db.SetMaxOpenConns(1)
		if _, err := db.ExecContext(ctx, `CREATE TABLE t (id INTEGER PRIMARY KEY, b BLOB)`); err != nil {
			t.Fatal(err)
		}
		if err := ensureIdentity(ctx, db); err != nil { // as Open does
			t.Fatal(err)
		}
		for range rows {
			if _, err := db.ExecContext(ctx, `INSERT INTO t (b) VALUES (randomblob(3000))`); err != nil {
				t.Fatal(err)
			}
		}
		return db, p
	}
	pair, pp := mk("pair.db", 4)
	defer pair.Close()
	other, op := mk("other.db", 2)
	defer other.Close()
	copyFileT(t, pp, filepath.Join(out, "pair.db"))
	copyFileT(t, pp+"-wal", filepath.Join(out, "pair.db-wal"))
	copyFileT(t, op+"-wal", filepath.Join(out, "other.db-wal"))
	bk := filepath.Join(out, "backup.db")
	os.Remove(bk)
	if _, err := pair.ExecContext(ctx, `VACUUM INTO ?`, bk); err != nil {
		t.Fatal(err)
	}
}
