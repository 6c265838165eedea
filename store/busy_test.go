package store

import (
	"context"
	"database/sql"
	"fmt"
	"path/filepath"
	"testing"
)

// TestIsBusy: a write that finds another connection holding the write
// lock past its busy timeout is IsBusy, also wrapped; other errors and
// nil are not.
func TestIsBusy(t *testing.T) {
	ctx := context.Background()
	path := filepath.Join(t.TempDir(), "busy.db")
	d, err := Open(ctx, path)
	if err != nil {
		t.Fatal(err)
	}
	defer d.Close()
	tx, err := d.Begin(ctx) // holds the write lock (immediate)
	if err != nil {
		t.Fatal(err)
	}
	defer tx.Rollback()
	if _, err := tx.ExecContext(ctx, `CREATE TABLE held (x)`); err != nil {
		t.Fatal(err)
	}
	other, err := sql.Open("sqlite", "file:"+path+"?_pragma=busy_timeout(20)&_txlock=immediate")
	if err != nil {
		t.Fatal(err)
	}
	defer other.Close()
	_, werr := other.ExecContext(ctx, `CREATE TABLE other (x)`)
	if werr == nil {
		t.Fatal("a second writer got the lock while a transaction held it")
	}
	if !IsBusy(werr) || !IsBusy(fmt.Errorf("store: create user: %w", werr)) {
		t.Errorf("IsBusy(%v) = false", werr)
	}
	for _, e := range []error{nil, ErrInvalid, ErrConflict, fmt.Errorf("x: %w", ErrNotFound)} {
		if IsBusy(e) {
			t.Errorf("IsBusy(%v) = true", e)
		}
	}
}
