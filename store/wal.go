package store

import (
	"context"
	"database/sql"
	"fmt"
	"math/rand/v2"

	"glowlog/store/sqlitewal"
)

// WALError reports a leftover FILE-wal that does not belong to FILE; its
// message says what to do (see package sqlitewal for the conditions).
type WALError = sqlitewal.Error

// CheckWAL returns a *WALError when path-wal holds committed changes that
// cannot belong to the database file at path. Open runs it before SQLite
// sees the file: SQLite would apply such a WAL to the wrong database.
func CheckWAL(path string) error { return sqlitewal.Check(path) }

// The file identity that CheckWAL compares lives in the header field
// PRAGMA user_version (reserved for it: schema versions are in
// schema_migrations).

// ensureIdentity gives the database a random nonzero file identity in
// PRAGMA user_version when it has none (see CheckWAL).
func ensureIdentity(ctx context.Context, sdb *sql.DB) error {
	var v int64
	if err := sdb.QueryRowContext(ctx, `PRAGMA user_version`).Scan(&v); err != nil {
		return fmt.Errorf("store: reading the file identity: %w", err)
	}
	if v != 0 {
		return nil
	}
	if err := setIdentity(ctx, sdb); err != nil {
		return err
	}
	// Copy the identity into the database file now rather than at the
	// first automatic checkpoint, so that the file carries it from the
	// start (a busy database finishes this later; that is fine).
	if _, err := sdb.ExecContext(ctx, `PRAGMA wal_checkpoint(PASSIVE)`); err != nil {
		return fmt.Errorf("store: checkpoint: %w", err)
	}
	return nil
}

// setIdentity writes a new random file identity.
func setIdentity(ctx context.Context, sdb *sql.DB) error {
	id := 1 + rand.Int64N(1<<31-1) // user_version is a signed 32-bit integer
	if _, err := sdb.ExecContext(ctx, fmt.Sprintf(`PRAGMA user_version = %d`, id)); err != nil {
		return fmt.Errorf("store: writing the file identity: %w", err)
	}
	return nil
}
