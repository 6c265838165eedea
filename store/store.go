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
	"os"
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
	// cols is the trend column store (trendcols.go).
	cols trendCols

	// auditReady is set once the audit tables and triggers are in place
	// (after the migrations); from then on every write transaction
	// records its actor (audit.go).
	auditReady bool
	// actorSet and actorClear write audit_actor (prepared once).
	actorSet, actorClear *sql.Stmt
	// hot are the ingest path's statements, prepared once (stmts.go);
	// rhot its reads on the read pool.
	hot, rhot map[string]*sql.Stmt
	// wdb is the pool of write transactions (Begin, inTx): one
	// connection, so that writers queue in Go and each starts the moment
	// the previous one ends, instead of polling SQLite's busy handler
	// (which sleeps up to 100 ms between tries); the statements prepared
	// on it stay prepared. db serves reads beside it (WAL).
	wdb *sql.DB

	path string // the file, for Backup
	// pageSize is the database's page size in bytes (newPageSize for a
	// file Open created; an older file keeps its own).
	pageSize int64

	// group is the group committer of InGroupTx (group.go).
	group groupCommitter
	// ckpt checkpoints the WAL outside the write lock (checkpoint.go).
	ckpt checkpointer
	// cache drops the new pages' cached copies after checkpoints
	// (cachedrop.go); only the checkpointer goroutine uses it.
	cache cacheDropper
}

// Sync modes of Options.Sync (SQLite's PRAGMA synchronous in WAL mode).
const (
	// SyncNormal syncs the WAL at checkpoints only: a commit survives a
	// crash of the process, but the last commits before a power loss or
	// an operating-system crash can be lost (the database stays
	// consistent). The default.
	SyncNormal = "normal"
	// SyncFull also syncs the WAL at every commit: a commit that returned
	// survives a power loss too, at the price of one fsync per write.
	SyncFull = "full"
)

// ParseSync checks a sync mode name ("" is SyncNormal).
func ParseSync(s string) (string, error) {
	switch strings.ToLower(strings.TrimSpace(s)) {
	case "", SyncNormal:
		return SyncNormal, nil
	case SyncFull:
		return SyncFull, nil
	}
	return "", fmt.Errorf("%w: sync mode %q: use full or normal", ErrInvalid, s)
}

// Options tune Open; the zero value is the default.
type Options struct {
	// Sync is SyncNormal (default when empty) or SyncFull.
	Sync string
}

// Open opens (creating if needed) the database file at path and applies
// pending migrations. Every pooled connection gets foreign keys on, WAL
// journaling (readers run during writes), a 5 s busy timeout (writers
// wait instead of failing), the sync mode of opts (synchronous=NORMAL
// unless Options.Sync is SyncFull) and immediate write transactions (no
// upgrade deadlocks), through the DSN so that the pragmas cover the whole
// pool. The file and its -wal and -shm are made private (0600,
// EnsurePrivate).
//
// Before SQLite sees the file, Open refuses a leftover path-wal that does
// not belong to it (CheckWAL): SQLite would apply its pages to the wrong
// database.
func Open(ctx context.Context, path string, opts ...Options) (*DB, error) {
	var o Options
	if len(opts) > 0 {
		o = opts[0]
	}
	sync, err := ParseSync(o.Sync)
	if err != nil {
		return nil, err
	}
	if path != ":memory:" {
		if err := CheckWAL(path); err != nil {
			return nil, err
		}
	}
	sdb, err := openSQL(path, sync)
	if err != nil {
		return nil, err
	}
	if path == ":memory:" {
		sdb.SetMaxOpenConns(1) // one in-memory database, not one per connection
	} else {
		// Concurrent requests keep their connections (and the statements
		// prepared on them) instead of opening new ones.
		sdb.SetMaxIdleConns(8)
	}
	d := &DB{db: sdb, wdb: sdb, Now: time.Now, path: path}
	if err := sdb.QueryRowContext(ctx, `PRAGMA page_size`).Scan(&d.pageSize); err != nil {
		sdb.Close()
		return nil, fmt.Errorf("store: page size of %s: %w", path, err)
	}
	if err := d.migrate(ctx); err != nil {
		sdb.Close()
		return nil, err
	}
	if err := d.ensureAuditTriggers(ctx); err != nil {
		sdb.Close()
		return nil, err
	}
	if path != ":memory:" {
		// Opened without openSQL's EnsurePrivate: closing a descriptor of
		// the file (as a permission check may) would drop this process's
		// SQLite locks on it, which tell other processes (restore) that
		// the database is in use.
		// The write connection never checkpoints inside a commit
		// (checkpoint.go), and keeps its statement and savepoint
		// journals in memory (temp_store 2): they hold the pages a
		// statement or a group commit's savepoint (group.go) changes, for
		// a rollback within the transaction, and were written to a
		// temporary file page by page (~0.1 ms per upload of one file in
		// BenchmarkAPIIngest). They are never needed after a crash (the
		// transaction is lost then). The read pool keeps the default:
		// a large sort may spill to a file.
		spill := fmt.Sprintf("&_pragma=cache_spill(%d)", writeSpillBytes/d.pageSize)
		if d.wdb, err = sql.Open("sqlite", sqlDSN(path, sync)+"&_pragma=wal_autocheckpoint(0)&_pragma=temp_store(2)"+spill); err != nil {
			sdb.Close()
			return nil, fmt.Errorf("store: open %s: %w", path, err)
		}
		d.wdb.SetMaxOpenConns(1)
		d.openCacheFile()
	}
	if err := d.prepareActor(ctx); err != nil {
		d.Close()
		return nil, err
	}
	if err := d.prepareHot(ctx); err != nil {
		d.Close()
		return nil, err
	}
	d.auditReady = true
	if path != ":memory:" {
		if err := ensureIdentity(ctx, sdb); err != nil {
			d.Close()
			return nil, err
		}
	}
	return d, nil
}

// sqlDSN is the data source name of path with glowlog's pragmas.
func sqlDSN(path, sync string) string {
	if path == ":memory:" {
		return "file::memory:?_pragma=foreign_keys(1)&_pragma=busy_timeout(5000)&_txlock=immediate"
	}
	return "file:" + path + "?_pragma=foreign_keys(1)&_pragma=journal_mode(WAL)&_pragma=busy_timeout(5000)&_pragma=synchronous(" + strings.ToUpper(sync) + ")&_txlock=immediate"
}

// writeSpillBytes: a write transaction's changed pages stay in the write
// connection's page cache up to this size (PRAGMA cache_spill, in pages)
// instead of SQLite's cache_size (2 MB). Beyond its cache size SQLite
// writes changed pages to the WAL before the commit ("spills" them); in a
// group commit it first copies each spilled page that an open savepoint
// may have to restore into the savepoint's journal, and a page spilled
// and changed again is written to the WAL twice. One run's version of 20
// whole-route results is ~1 MB of pages, a bulk group (group.go) several
// times that: with spilling, groups of 8 took ~0.8 ms more CPU per
// version (BenchmarkBulkVersions). The pages beyond cache_size are given back
// after the commit.
const writeSpillBytes = 32 << 20

// newPageSize is the page size of a database file Open creates. SQLite
// writes every page of a commit to the WAL, and every page a checkpoint
// copies to the database file, with a system call of its own: results of
// 50–100 kB per spectrum took ~20 calls each way with SQLite's default of
// 4 KiB, ~5 with 16 KiB (BenchmarkAPIIngest, BenchmarkBulkReanalysis).
// The page size of a WAL database is fixed when the file is created, so
// older files keep theirs (4 KiB); everything works with either
// (checkpoint thresholds are in bytes), and a backup keeps its source's.
const newPageSize = 16384

// openSQL opens the pool with glowlog's pragmas, without migrating.
func openSQL(path, sync string) (*sql.DB, error) {
	dsn := sqlDSN(path, sync)
	if path != ":memory:" {
		if err := EnsurePrivate(path); err != nil {
			return nil, err
		}
		if err := initPageSize(path); err != nil {
			return nil, err
		}
	}
	sdb, err := sql.Open("sqlite", dsn)
	if err != nil {
		return nil, fmt.Errorf("store: open %s: %w", path, err)
	}
	return sdb, nil
}

// initPageSize gives an empty (new) database file at path the page size
// newPageSize and WAL journaling, which fixes it. A file with content
// keeps its page size. (The DSN cannot do this: the driver runs its
// pragmas in alphabetical order, journal_mode before page_size.)
func initPageSize(path string) error {
	fi, err := os.Stat(path)
	if err != nil {
		return fmt.Errorf("store: %w", err)
	}
	if fi.Size() != 0 {
		return nil
	}
	sdb, err := sql.Open("sqlite", "file:"+path+"?_pragma=busy_timeout(5000)")
	if err != nil {
		return fmt.Errorf("store: open %s: %w", path, err)
	}
	defer sdb.Close()
	conn, err := sdb.Conn(context.Background())
	if err != nil {
		return fmt.Errorf("store: open %s: %w", path, err)
	}
	defer conn.Close()
	// A no-op when another process made the file in the meantime.
	if _, err := conn.ExecContext(context.Background(), fmt.Sprintf(`PRAGMA page_size = %d`, newPageSize)); err != nil {
		return fmt.Errorf("store: page size of %s: %w", path, err)
	}
	if _, err := conn.ExecContext(context.Background(), `PRAGMA journal_mode = WAL`); err != nil {
		return fmt.Errorf("store: WAL mode of %s: %w", path, err)
	}
	return nil
}

// Close closes the database.
func (d *DB) Close() error {
	d.closeGroup()
	d.stopCheckpoints()
	if d.wdb != nil && d.wdb != d.db {
		d.wdb.Close()
	}
	err := d.db.Close()
	d.closeCacheFile() // after SQLite's connections (cachedrop.go)
	return err
}

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
	tx, err := d.wdb.BeginTx(ctx, nil)
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
	if err := tx.Commit(); err != nil {
		return err
	}
	d.afterCommit()
	d.restartWAL()
	return nil
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
