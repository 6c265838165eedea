package store

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"time"

	"glowlog/store/sqlitewal"
)

// Backups. A plain copy (cp) of a live database is not a backup: the
// committed changes not yet checkpointed live in FILE-wal, and a copy
// taken while SQLite writes can catch the file half-updated, so the copy
// can be malformed or silently miss acknowledged runs. Backup instead runs
// VACUUM INTO inside one read transaction: a consistent snapshot of the
// whole database, taken while writers continue, written as a compact
// stand-alone file in rollback-journal mode (no -wal needed).

// ErrInUse is returned (wrapped) by Restore while another process has the
// database open.
var ErrInUse = errors.New("store: database in use")

// BackupSummary describes a checked backup.
type BackupSummary struct {
	Path     string
	Runs     int64
	Analyses int64
	Bytes    int64
	Elapsed  time.Duration
}

// String is the one-line summary printed by the commands and logged by
// scheduled backups.
func (s BackupSummary) String() string {
	return fmt.Sprintf("%s: %d runs, %d analyses, %d bytes, %.2f s, integrity ok",
		s.Path, s.Runs, s.Analyses, s.Bytes, s.Elapsed.Seconds())
}

// Backup writes a consistent copy of the open database to out (mode 0600)
// and checks it (Verify). An existing out is refused with ErrConflict
// unless force. The copy is written to a temporary file beside out and
// renamed into place only after the check, so out is never half-written.
func (d *DB) Backup(ctx context.Context, out string, force bool) (BackupSummary, error) {
	if d.path == "" || d.path == ":memory:" {
		return BackupSummary{}, fmt.Errorf("%w: backup of an in-memory database", ErrInvalid)
	}
	return backupSQL(ctx, d.db, d.path, out, force)
}

// BackupFile backs up the database file at dbPath, which may be in use by
// a running server, without migrating it (see DB.Backup).
func BackupFile(ctx context.Context, dbPath, out string, force bool) (BackupSummary, error) {
	h, err := sqlitewal.ReadHeader(dbPath)
	if err != nil {
		return BackupSummary{}, err
	}
	if !h.Exists {
		return BackupSummary{}, fmt.Errorf("%w: database %s does not exist", ErrInvalid, dbPath)
	}
	if !h.SQLite {
		return BackupSummary{}, fmt.Errorf("%w: %s is not a SQLite database", ErrInvalid, dbPath)
	}
	if err := CheckWAL(dbPath); err != nil {
		return BackupSummary{}, err
	}
	// No journal_mode pragma: the source keeps the mode it has (a WAL
	// database is read through its WAL), and backup changes nothing in it.
	sdb, err := sql.Open("sqlite", "file:"+dbPath+"?_pragma=busy_timeout(5000)")
	if err != nil {
		return BackupSummary{}, fmt.Errorf("store: open %s: %w", dbPath, err)
	}
	defer sdb.Close()
	return backupSQL(ctx, sdb, dbPath, out, force)
}

func backupSQL(ctx context.Context, sdb *sql.DB, dbPath, out string, force bool) (BackupSummary, error) {
	start := time.Now()
	if same, err := samePath(dbPath, out); err != nil {
		return BackupSummary{}, err
	} else if same {
		return BackupSummary{}, fmt.Errorf("%w: the backup %s would replace the database itself", ErrInvalid, out)
	}
	if _, err := os.Lstat(out); err == nil && !force {
		return BackupSummary{}, fmt.Errorf("%w: %s already exists (--force replaces it)", ErrConflict, out)
	}
	tmp, err := os.CreateTemp(filepath.Dir(out), "."+filepath.Base(out)+".tmp-*")
	if err != nil {
		return BackupSummary{}, fmt.Errorf("store: backup: %w", err)
	}
	tmpPath := tmp.Name()
	tmp.Close() // VACUUM INTO accepts an existing empty file and keeps its mode (0600)
	ok := false
	defer func() {
		if !ok {
			os.Remove(tmpPath)
			os.Remove(tmpPath + "-journal")
		}
	}()
	if _, err := sdb.ExecContext(ctx, `VACUUM INTO ?`, tmpPath); err != nil {
		return BackupSummary{}, fmt.Errorf("store: backup: %w", err)
	}
	if err := newBackupIdentity(ctx, tmpPath); err != nil {
		return BackupSummary{}, err
	}
	if err := os.Chmod(tmpPath, 0o600); err != nil {
		return BackupSummary{}, fmt.Errorf("store: backup: %w", err)
	}
	if err := syncFile(tmpPath); err != nil {
		return BackupSummary{}, err
	}
	sum, err := Verify(ctx, tmpPath)
	if err != nil {
		return BackupSummary{}, fmt.Errorf("store: the new backup failed its check: %w", err)
	}
	if err := os.Rename(tmpPath, out); err != nil {
		return BackupSummary{}, fmt.Errorf("store: backup: %w", err)
	}
	ok = true
	if err := syncDir(filepath.Dir(out)); err != nil {
		return BackupSummary{}, err
	}
	sum.Path, sum.Elapsed = out, time.Since(start)
	return sum, nil
}

// Verify checks a backup (or any glowlog database file without a WAL
// beside it): a SQLite file whose PRAGMA integrity_check answers ok and
// which has the schema_migrations table; it counts runs and analyses.
// Problems with the file are ErrInvalid.
func Verify(ctx context.Context, path string) (BackupSummary, error) {
	sum := BackupSummary{Path: path}
	h, err := sqlitewal.ReadHeader(path)
	if err != nil {
		return sum, err
	}
	if !h.Exists {
		return sum, fmt.Errorf("%w: %s does not exist", ErrInvalid, path)
	}
	if !h.SQLite {
		return sum, fmt.Errorf("%w: %s is not a SQLite database", ErrInvalid, path)
	}
	if err := CheckWAL(path); err != nil {
		return sum, err
	}
	start := time.Now()
	sdb, err := sql.Open("sqlite", "file:"+path+"?_pragma=busy_timeout(5000)&_pragma=query_only(1)")
	if err != nil {
		return sum, fmt.Errorf("store: open %s: %w", path, err)
	}
	defer sdb.Close()
	rows, err := sdb.QueryContext(ctx, `PRAGMA integrity_check`)
	if err != nil {
		return sum, fmt.Errorf("%w: %s: integrity check: %v", ErrInvalid, path, err)
	}
	var msgs []string
	for rows.Next() {
		var m string
		if err := rows.Scan(&m); err != nil {
			rows.Close()
			return sum, err
		}
		msgs = append(msgs, m)
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return sum, fmt.Errorf("%w: %s: integrity check: %v", ErrInvalid, path, err)
	}
	if len(msgs) != 1 || msgs[0] != "ok" {
		if len(msgs) > 5 {
			msgs = append(msgs[:5], "…")
		}
		return sum, fmt.Errorf("%w: %s fails the integrity check: %s", ErrInvalid, path, strings.Join(msgs, "; "))
	}
	var n int
	if err := sdb.QueryRowContext(ctx, `SELECT count(*) FROM sqlite_schema WHERE type = 'table' AND name = 'schema_migrations'`).Scan(&n); err != nil {
		return sum, fmt.Errorf("%w: %s: %v", ErrInvalid, path, err)
	}
	if n == 0 {
		return sum, fmt.Errorf("%w: %s is not a glowlog database (no schema_migrations table)", ErrInvalid, path)
	}
	for _, c := range []struct {
		table string
		n     *int64
	}{{"runs", &sum.Runs}, {"analyses", &sum.Analyses}} {
		if err := sdb.QueryRowContext(ctx, `SELECT count(*) FROM `+c.table).Scan(c.n); err != nil {
			return sum, fmt.Errorf("%w: %s: counting %s: %v", ErrInvalid, path, c.table, err)
		}
	}
	fi, err := os.Stat(path)
	if err != nil {
		return sum, fmt.Errorf("store: %w", err)
	}
	sum.Bytes, sum.Elapsed = fi.Size(), time.Since(start)
	return sum, nil
}

// RestoreResult describes a restore.
type RestoreResult struct {
	BackupSummary
	// Aside is where the replaced database was kept ("" when there was
	// none); its WAL, if any, is Aside+"-wal".
	Aside string
}

// Restore puts the backup at backupPath in place of the database file at
// dbPath. It copies the backup beside dbPath (mode 0600) and checks the
// copy (Verify) first; refuses with ErrInUse while any process has dbPath
// open (a running server holds SQLite's shared lock on it); moves the
// replaced file and its WAL aside to dbPath.before-restore-<UTC time> and
// -wal, removes the stale -shm, and renames the checked copy into place.
// Nothing is replaced when a check fails.
func Restore(ctx context.Context, dbPath, backupPath string, now time.Time) (RestoreResult, error) {
	var res RestoreResult
	if same, err := samePath(dbPath, backupPath); err != nil {
		return res, err
	} else if same {
		return res, fmt.Errorf("%w: the backup %s is the database itself", ErrInvalid, backupPath)
	}
	if w, err := sqlitewal.ReadWAL(backupPath + "-wal"); err != nil {
		return res, err
	} else if w.Commits > 0 {
		return res, fmt.Errorf("%w: %s has a WAL with committed changes beside it (a copy of a live database, not a backup); make backups with glowlog backup", ErrInvalid, backupPath)
	}
	if _, err := Verify(ctx, backupPath); err != nil {
		return res, err
	}
	if inUse, err := fileInUse(dbPath); err != nil {
		return res, err
	} else if inUse {
		return res, fmt.Errorf("%w: %s is open in another process (a running glowlog serve?); stop it, then restore", ErrInUse, dbPath)
	}
	tmp, err := copyTemp(backupPath, dbPath)
	if err != nil {
		return res, err
	}
	ok := false
	defer func() {
		if !ok {
			os.Remove(tmp)
		}
	}()
	sum, err := Verify(ctx, tmp)
	if err != nil {
		return res, err
	}
	// Check once more just before replacing: a server may have started.
	if inUse, err := fileInUse(dbPath); err != nil {
		return res, err
	} else if inUse {
		return res, fmt.Errorf("%w: %s is open in another process (a running glowlog serve?); stop it, then restore", ErrInUse, dbPath)
	}
	if _, err := os.Lstat(dbPath); err == nil {
		stamp := now.UTC().Format(StampLayout)
		aside := dbPath + ".before-restore-" + stamp
		for i := 2; fileExists(aside) || fileExists(aside+"-wal"); i++ {
			aside = fmt.Sprintf("%s.before-restore-%s-%d", dbPath, stamp, i)
		}
		if err := os.Rename(dbPath, aside); err != nil {
			return res, fmt.Errorf("store: restore: %w", err)
		}
		res.Aside = aside
		if err := os.Rename(dbPath+"-wal", aside+"-wal"); err != nil && !errors.Is(err, os.ErrNotExist) {
			return res, fmt.Errorf("store: restore: moving the old WAL aside: %w", err)
		}
	} else if fileExists(dbPath + "-wal") {
		// A WAL without its database: keep it aside too, never apply it.
		aside := dbPath + ".orphan-wal-" + now.UTC().Format(StampLayout)
		if err := os.Rename(dbPath+"-wal", aside); err != nil {
			return res, fmt.Errorf("store: restore: %w", err)
		}
	}
	if err := os.Remove(dbPath + "-shm"); err != nil && !errors.Is(err, os.ErrNotExist) {
		return res, fmt.Errorf("store: restore: %w", err)
	}
	if err := os.Rename(tmp, dbPath); err != nil {
		return res, fmt.Errorf("store: restore: %w", err)
	}
	ok = true
	if err := syncDir(filepath.Dir(dbPath)); err != nil {
		return res, err
	}
	sum.Path = dbPath
	res.BackupSummary = sum
	return res, nil
}

// StampLayout is the UTC time stamp in names of backups and of databases
// kept aside (RFC 3339 with the colons replaced, so that it sorts and is a
// valid file name everywhere).
const StampLayout = "2006-01-02T15-04-05Z"

// copyTemp copies src into a new 0600 temporary file beside dst.
func copyTemp(src, dst string) (string, error) {
	in, err := os.Open(src)
	if err != nil {
		return "", fmt.Errorf("store: %w", err)
	}
	defer in.Close()
	out, err := os.CreateTemp(filepath.Dir(dst), "."+filepath.Base(dst)+".restore-*")
	if err != nil {
		return "", fmt.Errorf("store: %w", err)
	}
	if _, err := out.ReadFrom(in); err != nil {
		out.Close()
		os.Remove(out.Name())
		return "", fmt.Errorf("store: copying %s: %w", src, err)
	}
	if err := out.Sync(); err != nil {
		out.Close()
		os.Remove(out.Name())
		return "", fmt.Errorf("store: %w", err)
	}
	if err := out.Close(); err != nil {
		os.Remove(out.Name())
		return "", fmt.Errorf("store: %w", err)
	}
	return out.Name(), nil
}

func fileExists(p string) bool {
	_, err := os.Lstat(p)
	return err == nil
}

// samePath reports whether a and b name the same file (or the same
// absolute path when b does not exist yet).
func samePath(a, b string) (bool, error) {
	aa, err := filepath.Abs(a)
	if err != nil {
		return false, err
	}
	bb, err := filepath.Abs(b)
	if err != nil {
		return false, err
	}
	if aa == bb {
		return true, nil
	}
	fa, errA := os.Stat(a)
	fb, errB := os.Stat(b)
	return errA == nil && errB == nil && os.SameFile(fa, fb), nil
}

func syncFile(p string) error {
	f, err := os.OpenFile(p, os.O_RDWR, 0)
	if err != nil {
		return fmt.Errorf("store: %w", err)
	}
	defer f.Close()
	if err := f.Sync(); err != nil {
		return fmt.Errorf("store: sync %s: %w", p, err)
	}
	return nil
}

// syncDir makes a rename in dir durable (best effort where directories
// cannot be synced).
func syncDir(dir string) error {
	f, err := os.Open(dir)
	if err != nil {
		return fmt.Errorf("store: %w", err)
	}
	defer f.Close()
	f.Sync()
	return nil
}

// newBackupIdentity gives a fresh backup its own file identity, so that a
// WAL of the database it was copied from never passes for its own.
func newBackupIdentity(ctx context.Context, path string) error {
	sdb, err := sql.Open("sqlite", "file:"+path+"?_pragma=busy_timeout(5000)")
	if err != nil {
		return fmt.Errorf("store: open %s: %w", path, err)
	}
	defer sdb.Close()
	return setIdentity(ctx, sdb)
}
