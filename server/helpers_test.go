package server

import (
	"context"
	"path/filepath"
	"testing"

	"glowlog/store"
)

// testDB opens a fresh SQLite file for a test, closed at its end.
func testDB(t testing.TB) *store.DB {
	t.Helper()
	db, err := store.Open(context.Background(), filepath.Join(t.TempDir(), "t.db"))
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { db.Close() })
	return db
}
