// Package store keeps glowlog's runs, analyses, users and sessions in one
// SQLite file (modernc.org/sqlite, pure Go). Schema changes are the
// numbered SQL files of package migrations, applied at Open, one
// transaction each.
//
// Exported methods take a context first and own their transaction;
// "not found" is ErrNotFound (wrapped), never (nil, nil). The clock is DB.Now,
// replaceable in tests.
package store

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"io/fs"
	"sort"
	"strings"
	"time"

	_ "modernc.org/sqlite" // registers the "sqlite" driver

	"glowlog/migrations"
)

// Errors returned (wrapped) by the store.
var (
	ErrNotFound = errors.New("store: not found")
	ErrConflict = errors.New("store: conflict")
	ErrInvalid  = errors.New("store: invalid")
)

// DB is the glowlog database.
type DB struct {
	db *sql.DB
	// Now is the clock; tests replace it.
	Now func() time.Time

	trends trendCache

	// auditReady is set once the audit tables and triggers are in place
	// (after the migrations); from then on every write transaction
	// records its actor (audit.go).
	auditReady bool
	// actorSet and actorClear write audit_actor (prepared once).
	actorSet, actorClear *sql.Stmt
}

// Open opens (creating if needed) the database file at path and applies
// pending migrations. Every pooled connection gets foreign keys on, WAL
// journaling (readers run during writes), a 5 s busy timeout (writers
// wait instead of failing) and immediate write transactions (no upgrade
// deadlocks), through the DSN so that the pragmas cover the whole pool.
// The file and its -wal and -shm are made private (0600, EnsurePrivate).
func Open(ctx context.Context, path string) (*DB, error) {
	dsn := "file:" + path + "?_pragma=foreign_keys(1)&_pragma=journal_mode(WAL)&_pragma=busy_timeout(5000)&_pragma=synchronous(NORMAL)&_txlock=immediate"
	if path == ":memory:" {
		dsn = "file::memory:?_pragma=foreign_keys(1)&_pragma=busy_timeout(5000)&_txlock=immediate"
	} else if err := EnsurePrivate(path); err != nil {
		return nil, err
	}
	sdb, err := sql.Open("sqlite", dsn)
	if err != nil {
		return nil, fmt.Errorf("store: open %s: %w", path, err)
	}
	if path == ":memory:" {
		sdb.SetMaxOpenConns(1) // one in-memory database, not one per connection
	}
	d := &DB{db: sdb, Now: time.Now}
	if err := d.migrate(ctx); err != nil {
		sdb.Close()
		return nil, err
	}
	if err := d.ensureAuditTriggers(ctx); err != nil {
		sdb.Close()
		return nil, err
	}
	if err := d.prepareActor(ctx); err != nil {
		sdb.Close()
		return nil, err
	}
	d.auditReady = true
	return d, nil
}

// Close closes the database.
func (d *DB) Close() error { return d.db.Close() }

// Ping checks that the database answers (for /healthz).
func (d *DB) Ping(ctx context.Context) error {
	var one int
	return d.db.QueryRowContext(ctx, "SELECT 1").Scan(&one)
}

// SQL exposes the handle for benchmarks and tests in other packages.
func (d *DB) SQL() *sql.DB { return d.db }

func (d *DB) now() int64 { return d.Now().Unix() }

// migrate applies the embedded migrations not yet recorded.
func (d *DB) migrate(ctx context.Context) error {
	if _, err := d.db.ExecContext(ctx, `CREATE TABLE IF NOT EXISTS schema_migrations (
		name TEXT PRIMARY KEY, applied_at INTEGER NOT NULL) STRICT`); err != nil {
		return fmt.Errorf("store: migrations table: %w", err)
	}
	names, err := fs.Glob(migrations.FS, "*.sql")
	if err != nil {
		return err
	}
	sort.Strings(names)
	for _, name := range names {
		var n int
		if err := d.db.QueryRowContext(ctx, `SELECT count(*) FROM schema_migrations WHERE name = ?`, name).Scan(&n); err != nil {
			return fmt.Errorf("store: migration %s: %w", name, err)
		}
		if n > 0 {
			continue
		}
		body, err := fs.ReadFile(migrations.FS, name)
		if err != nil {
			return err
		}
		if err := d.inTx(ctx, func(tx *sql.Tx) error {
			// The audit triggers name the columns of their tables; they
			// are rebuilt after the migrations (ensureAuditTriggers), so
			// that a migration may drop or rename an audited column.
			if err := dropAuditTriggers(ctx, tx); err != nil {
				return err
			}
			for _, stmt := range splitSQL(string(body)) {
				if _, err := tx.ExecContext(ctx, stmt); err != nil {
					return fmt.Errorf("%w\n%s", err, stmt)
				}
			}
			if _, err := tx.ExecContext(ctx, `INSERT INTO schema_migrations (name, applied_at) VALUES (?, ?)`, name, d.now()); err != nil {
				return err
			}
			return recordMigration(ctx, tx, name)
		}); err != nil {
			return fmt.Errorf("store: migration %s: %w", name, err)
		}
	}
	return nil
}

// splitSQL splits a migration into statements at semicolons that end a
// line (the migrations contain no semicolons inside literals).
func splitSQL(s string) []string {
	var out []string
	var cur strings.Builder
	for _, line := range strings.Split(s, "\n") {
		t := strings.TrimSpace(line)
		if strings.HasPrefix(t, "--") || t == "" {
			continue
		}
		cur.WriteString(line)
		cur.WriteByte('\n')
		if strings.HasSuffix(t, ";") {
			out = append(out, cur.String())
			cur.Reset()
		}
	}
	if strings.TrimSpace(cur.String()) != "" {
		out = append(out, cur.String())
	}
	return out
}

// inTx runs fn in a transaction, committing when it returns nil. The
// context's actor (WithActor) is recorded for the audit trail.
func (d *DB) inTx(ctx context.Context, fn func(tx *sql.Tx) error) error {
	tx, err := d.db.BeginTx(ctx, nil)
	if err != nil {
		return err
	}
	defer tx.Rollback()
	if err := d.setActor(ctx, tx); err != nil {
		return err
	}
	if err := fn(tx); err != nil {
		return err
	}
	if err := d.clearActor(ctx, tx); err != nil {
		return err
	}
	return tx.Commit()
}

// nullF converts an optional float to a SQL value.
func nullF(p *float64) any {
	if p == nil {
		return nil
	}
	return *p
}

// scanF converts a nullable column to an optional float.
func scanF(n sql.NullFloat64) *float64 {
	if !n.Valid {
		return nil
	}
	v := n.Float64
	return &v
}

// Generation returns the data generation number: it changes whenever a
// run, its summary or its tags change (triggers of migration 0002).
func (d *DB) Generation(ctx context.Context) (int64, error) {
	var g int64
	err := d.db.QueryRowContext(ctx, `SELECT gen FROM data_generation WHERE id = 1`).Scan(&g)
	return g, err
}
