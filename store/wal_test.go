package store

import (
	"context"
	"database/sql"
	"errors"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"time"

	"glowlog/store/sqlitewal"
)

func copyFileT(t testing.TB, src, dst string) {
	t.Helper()
	b, err := os.ReadFile(src)
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(dst, b, 0o600); err != nil {
		t.Fatal(err)
	}
}

// TestCheckWALGenuinePairs takes snapshots of a database file and its WAL
// between the transactions of two connections that grow, update in
// place, delete and checkpoint (passive, restart, truncate) in a seeded
// random order: every snapshot is what a killed process leaves behind,
// SQLite opens it with integrity ok, and CheckWAL must accept it.
func TestCheckWALGenuinePairs(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	live := filepath.Join(dir, "live.db")
	sdb, err := sql.Open("sqlite", "file:"+live+"?_pragma=journal_mode(WAL)&_pragma=wal_autocheckpoint(0)&_pragma=busy_timeout(5000)")
	if err != nil {
		t.Fatal(err)
	}
	defer sdb.Close()
	var conns [2]*sql.Conn
	for i := range conns {
		if conns[i], err = sdb.Conn(ctx); err != nil {
			t.Fatal(err)
		}
		defer conns[i].Close()
	}
	if _, err := conns[0].ExecContext(ctx, `CREATE TABLE t (id INTEGER PRIMARY KEY, b BLOB)`); err != nil {
		t.Fatal(err)
	}
	if err := setIdentity(ctx, sdb); err != nil { // as Open does
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(7, 13))
	snap := filepath.Join(dir, "snap.db")
	withPage1, withoutPage1 := 0, 0
	for i := range 400 {
		c := conns[rng.IntN(2)]
		var q string
		var args []any
		switch k := rng.IntN(20); {
		case k < 6:
			q, args = `INSERT INTO t (b) VALUES (?)`, []any{make([]byte, 100+rng.IntN(9000))}
		case k < 12:
			q = `UPDATE t SET b = randomblob(length(b)) WHERE id = (SELECT id FROM t ORDER BY random() LIMIT 1)`
		case k < 15:
			q = `INSERT INTO t (b) VALUES (randomblob(20))`
		case k < 17:
			q = `DELETE FROM t WHERE id IN (SELECT id FROM t ORDER BY random() LIMIT 3)`
		case k < 18:
			q = `PRAGMA wal_checkpoint(PASSIVE)`
		case k < 19:
			q = `PRAGMA wal_checkpoint(RESTART)`
		default:
			q = `PRAGMA wal_checkpoint(TRUNCATE)`
		}
		if _, err := c.ExecContext(ctx, q, args...); err != nil {
			t.Fatalf("step %d %s: %v", i, q, err)
		}
		for _, s := range []string{snap, snap + "-wal", snap + "-shm"} {
			os.Remove(s)
		}
		copyFileT(t, live, snap)
		if _, err := os.Stat(live + "-wal"); err == nil {
			copyFileT(t, live+"-wal", snap+"-wal")
		}
		w, err := sqlitewal.ReadWAL(snap + "-wal")
		if err != nil {
			t.Fatal(err)
		}
		if w.Commits > 0 {
			if len(w.Page1) > 0 {
				withPage1++
			} else {
				withoutPage1++
			}
		}
		if err := CheckWAL(snap); err != nil {
			t.Fatalf("step %d (%s): genuine pair refused: %v", i, q, err)
		}
		if i%50 == 49 {
			checkIntegrity(t, snap)
		}
	}
	// Both branches of the check were exercised.
	if withPage1 == 0 || withoutPage1 == 0 {
		t.Fatalf("snapshots with page 1 in the WAL: %d, without: %d", withPage1, withoutPage1)
	}
}

// checkIntegrity opens path with SQLite (applying its WAL) and requires
// integrity_check to answer ok.
func checkIntegrity(t testing.TB, path string) {
	t.Helper()
	db, err := sql.Open("sqlite", "file:"+path)
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	var res string
	if err := db.QueryRow(`PRAGMA integrity_check`).Scan(&res); err != nil {
		t.Fatal(err)
	}
	if res != "ok" {
		t.Fatalf("%s: integrity_check: %s", path, res)
	}
}

// openWithRuns opens a glowlog database at path with n runs. The caller
// closes it (or leaves it open so that its WAL keeps committed frames).
func openWithRuns(t *testing.T, path string, n int) *DB {
	t.Helper()
	ctx := context.Background()
	d, err := Open(ctx, path)
	if err != nil {
		t.Fatal(err)
	}
	u, err := d.CreateUser(ctx, "opal-"+filepath.Base(path), RoleOperator, "x")
	if err != nil {
		t.Fatal(err)
	}
	for i := range n {
		// Notes of 2 KB make the database grow, as stored spectra do.
		if _, err := d.CreateRun(ctx, u.ID, RunInput{Title: "run", StartedAt: time.Date(2026, 3, 1, i, 0, 0, 0, time.UTC), SourceType: "dc_glow", Notes: strings.Repeat("n", 2000)}); err != nil {
			t.Fatal(err)
		}
	}
	return d
}

// TestOpenRefusesForeignWAL puts the WAL of one glowlog database (copied
// while that database is open, as a kill leaves it) beside another
// database file, and beside a missing file: Open refuses both with a
// message that says what to do, and the database file is not changed.
// The genuine pair is accepted and has every run.
func TestOpenRefusesForeignWAL(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	other := filepath.Join(dir, "other.db")
	od := openWithRuns(t, other, 30)
	defer od.Close()
	w, err := sqlitewal.ReadWAL(other + "-wal")
	if err != nil || w.Commits == 0 {
		t.Fatalf("the open database's WAL has no committed frames (%v)", err)
	}

	// A genuine leftover pair (copied while open) opens and keeps its runs.
	crash := filepath.Join(dir, "crash.db")
	copyFileT(t, other, crash)
	copyFileT(t, other+"-wal", crash+"-wal")
	cd, err := Open(ctx, crash)
	if err != nil {
		t.Fatalf("genuine pair refused: %v", err)
	}
	var n int
	cd.SQL().QueryRow(`SELECT count(*) FROM runs`).Scan(&n)
	cd.Close()
	if n != 30 {
		t.Fatalf("genuine pair: %d runs, want 30", n)
	}

	// Another database, cleanly closed, with the foreign WAL beside it.
	mine := filepath.Join(dir, "mine.db")
	openWithRuns(t, mine, 5).Close()
	if _, err := os.Stat(mine + "-wal"); err == nil {
		t.Fatal("a cleanly closed database left a WAL")
	}
	before, _ := os.ReadFile(mine)
	copyFileT(t, other+"-wal", mine+"-wal")
	_, err = Open(ctx, mine)
	var we *WALError
	if !errors.As(err, &we) {
		t.Fatalf("Open with a foreign WAL: %v, want a *WALError", err)
	}
	for _, want := range []string{"does not belong to", "file identity", "mv " + mine + "-wal", "put the original file back"} {
		if !strings.Contains(err.Error(), want) {
			t.Errorf("message %q lacks %q", err, want)
		}
	}
	if after, _ := os.ReadFile(mine); string(after) != string(before) {
		t.Fatal("the database file changed although Open refused")
	}
	// Following the message's advice makes it open with its own 5 runs.
	os.Rename(mine+"-wal", mine+"-wal.orphan")
	md, err := Open(ctx, mine)
	if err != nil {
		t.Fatal(err)
	}
	md.SQL().QueryRow(`SELECT count(*) FROM runs`).Scan(&n)
	md.Close()
	if n != 5 {
		t.Fatalf("after moving the WAL aside: %d runs, want 5", n)
	}

	// A WAL whose database file is gone.
	gone := filepath.Join(dir, "gone.db")
	copyFileT(t, other+"-wal", gone+"-wal")
	if _, err := Open(ctx, gone); !errors.As(err, &we) || !strings.Contains(err.Error(), "missing") {
		t.Fatalf("Open of a missing file with a WAL: %v", err)
	}
	if fileExists(gone) {
		t.Fatal("Open created the missing database")
	}
}

// TestCheckWALBackupOverCrash is the restore mistake: a backup copied
// with cp over a database whose server was killed, its WAL still there.
func TestCheckWALBackupOverCrash(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	live := filepath.Join(dir, "live.db")
	d := openWithRuns(t, live, 10)
	defer d.Close()
	bk := filepath.Join(dir, "bk.db")
	if _, err := d.Backup(ctx, bk, false); err != nil {
		t.Fatal(err)
	}
	crash := filepath.Join(dir, "crash.db")
	copyFileT(t, live+"-wal", crash+"-wal")
	copyFileT(t, bk, crash) // "cp bk.db crash.db"
	err := CheckWAL(crash)
	var we *WALError
	if !errors.As(err, &we) || !strings.Contains(err.Error(), "rollback-journal mode") {
		t.Fatalf("CheckWAL: %v", err)
	}
}

// TestCheckWALWhileWriting runs CheckWAL again and again (as a second
// process's Open would) while three goroutines insert runs and a fourth
// checkpoints with restarts: a live database's own WAL is never refused.
func TestCheckWALWhileWriting(t *testing.T) {
	ctx := context.Background()
	path := filepath.Join(t.TempDir(), "live.db")
	d := openWithRuns(t, path, 1)
	defer d.Close()
	u, err := d.CreateUser(ctx, "busy", RoleOperator, "x")
	if err != nil {
		t.Fatal(err)
	}
	done := make(chan struct{})
	errs := make(chan error, 8)
	var wg sync.WaitGroup
	for w := range 3 {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range 80 {
				if _, err := d.CreateRun(ctx, u.ID, RunInput{Title: "busy", StartedAt: time.Date(2026, 6, 1, w, i, 0, 0, time.UTC), SourceType: "dc_glow", Notes: string(make([]byte, 1500))}); err != nil {
					errs <- err
					return
				}
			}
		}()
	}
	wg.Add(1)
	go func() {
		defer wg.Done()
		for i := 0; ; i++ {
			select {
			case <-done:
				return
			default:
			}
			mode := []string{"PASSIVE", "RESTART", "TRUNCATE"}[i%3]
			d.SQL().ExecContext(ctx, `PRAGMA wal_checkpoint(`+mode+`)`)
			time.Sleep(2 * time.Millisecond)
		}
	}()
	checks := 0
	for {
		if err := CheckWAL(path); err != nil {
			close(done)
			wg.Wait()
			t.Fatalf("after %d checks: %v", checks, err)
		}
		checks++
		var n int
		d.SQL().QueryRow(`SELECT count(*) FROM runs`).Scan(&n)
		if n >= 1+3*80 || len(errs) > 0 || checks > 5000 {
			break
		}
	}
	close(done)
	wg.Wait()
	select {
	case err := <-errs:
		t.Fatal(err)
	default:
	}
	t.Logf("%d checks while writing", checks)
}
