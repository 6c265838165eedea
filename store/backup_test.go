package store

import (
	"context"
	"errors"
	"os"
	"path/filepath"
	"sync"
	"testing"
	"time"

	"glowlog/store/sqlitewal"
)

// TestBackupUnderWriteLoad backs up while four goroutines insert runs
// (a bounded number each), restores the backup, and requires integrity
// ok and every run whose insert returned before the backup started.
func TestBackupUnderWriteLoad(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	live := filepath.Join(dir, "live.db")
	d := openWithRuns(t, live, 0)
	defer d.Close()
	u, err := d.CreateUser(ctx, "loader", RoleOperator, "x")
	if err != nil {
		t.Fatal(err)
	}
	var mu sync.Mutex
	var acked []int64
	started := make(chan struct{})
	var once sync.Once
	var wg sync.WaitGroup
	const workers, each = 4, 60
	for w := range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range each {
				id, err := d.CreateRun(ctx, u.ID, RunInput{Title: "load", StartedAt: time.Date(2026, 4, 1, w, i, 0, 0, time.UTC), SourceType: "dc_glow", Notes: string(make([]byte, 500))})
				if err != nil {
					t.Error(err)
					return
				}
				mu.Lock()
				acked = append(acked, id)
				if len(acked) == 40 {
					once.Do(func() { close(started) })
				}
				mu.Unlock()
			}
		}()
	}
	go func() { wg.Wait(); once.Do(func() { close(started) }) }() // never hang on failed writers
	<-started
	if t.Failed() {
		wg.Wait()
		return
	}
	mu.Lock()
	before := append([]int64(nil), acked...)
	mu.Unlock()
	out := filepath.Join(dir, "backup.db")
	sum, err := d.Backup(ctx, out, false)
	if err != nil {
		t.Fatal(err)
	}
	wg.Wait()
	if t.Failed() {
		return
	}
	mu.Lock()
	total := len(acked)
	mu.Unlock()
	if sum.Runs < int64(len(before)) || sum.Runs > int64(total) {
		t.Fatalf("backup has %d runs; %d acknowledged before it, %d in all", sum.Runs, len(before), total)
	}
	t.Logf("backup: %v; %d runs acknowledged before it, %d after the load", sum, len(before), total)
	fi, err := os.Stat(out)
	if err != nil {
		t.Fatal(err)
	}
	if fi.Mode().Perm() != 0o600 {
		t.Fatalf("backup mode %v, want 0600", fi.Mode().Perm())
	}
	if fi.Size() != sum.Bytes {
		t.Fatalf("summary says %d bytes, file has %d", sum.Bytes, fi.Size())
	}

	restored := filepath.Join(dir, "restored.db")
	res, err := Restore(ctx, restored, out, time.Now())
	if err != nil {
		t.Fatal(err)
	}
	if res.Aside != "" {
		t.Fatalf("nothing to keep aside, got %q", res.Aside)
	}
	checkIntegrity(t, restored)
	rd, err := Open(ctx, restored)
	if err != nil {
		t.Fatal(err)
	}
	defer rd.Close()
	for _, id := range before {
		if _, err := rd.GetRun(ctx, id); err != nil {
			t.Fatalf("run %d, acknowledged before the backup, in the restored database: %v", id, err)
		}
	}
}

func TestBackupRefusals(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	live := filepath.Join(dir, "live.db")
	d := openWithRuns(t, live, 2)
	defer d.Close()
	out := filepath.Join(dir, "b.db")
	if err := os.WriteFile(out, []byte("keep me"), 0o644); err != nil {
		t.Fatal(err)
	}
	if _, err := d.Backup(ctx, out, false); !errors.Is(err, ErrConflict) {
		t.Fatalf("existing out without force: %v", err)
	}
	if b, _ := os.ReadFile(out); string(b) != "keep me" {
		t.Fatal("existing out was changed")
	}
	sum, err := d.Backup(ctx, out, true)
	if err != nil {
		t.Fatal(err)
	}
	if sum.Runs != 2 {
		t.Fatalf("%d runs", sum.Runs)
	}
	if _, err := d.Backup(ctx, live, true); !errors.Is(err, ErrInvalid) {
		t.Fatalf("backup onto the database itself: %v", err)
	}
	// No temporary file is left behind.
	ents, _ := os.ReadDir(dir)
	for _, e := range ents {
		if filepath.Ext(e.Name()) != ".db" && e.Name() != "live.db-wal" && e.Name() != "live.db-shm" {
			t.Errorf("left behind: %s", e.Name())
		}
	}
	// A backup has its own file identity and is in rollback-journal mode.
	hl, _ := sqlitewal.ReadHeader(live)
	hb, _ := sqlitewal.ReadHeader(out)
	if hb.ID == 0 || hb.ID == hl.ID || hb.WriteVer != 1 {
		t.Fatalf("backup identity %x (database %x), write version %d", hb.ID, hl.ID, hb.WriteVer)
	}
}

// TestRestoreKeepsReplacedAside restores over a database that a killed
// server left with a WAL full of committed runs: the replaced file and its
// WAL are kept aside together and still open with every run; a damaged
// backup changes nothing.
func TestRestoreKeepsReplacedAside(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	src := filepath.Join(dir, "src.db")
	d := openWithRuns(t, src, 3)
	bk := filepath.Join(dir, "bk.db")
	if _, err := d.Backup(ctx, bk, false); err != nil {
		t.Fatal(err)
	}
	u, _ := d.CreateUser(ctx, "late", RoleOperator, "x")
	for range 4 {
		if _, err := d.CreateRun(ctx, u.ID, RunInput{Title: "after", StartedAt: time.Now(), SourceType: "dc_glow"}); err != nil {
			t.Fatal(err)
		}
	}
	// The "killed server": database and WAL as they are while open.
	db := filepath.Join(dir, "glowlog.db")
	copyFileT(t, src, db)
	copyFileT(t, src+"-wal", db+"-wal")
	d.Close()

	bad := filepath.Join(dir, "bad.db")
	b, _ := os.ReadFile(bk)
	os.WriteFile(bad, b[:len(b)/2], 0o600)
	before, _ := os.ReadFile(db)
	if _, err := Restore(ctx, db, bad, time.Now()); !errors.Is(err, ErrInvalid) {
		t.Fatalf("restore of a truncated backup: %v", err)
	}
	os.WriteFile(bad, []byte("not a database at all, just text"), 0o600)
	if _, err := Restore(ctx, db, bad, time.Now()); !errors.Is(err, ErrInvalid) {
		t.Fatalf("restore of a text file: %v", err)
	}
	if after, _ := os.ReadFile(db); string(after) != string(before) || !fileExists(db+"-wal") {
		t.Fatal("a refused restore changed the database")
	}

	now := time.Date(2026, 12, 2, 3, 4, 5, 0, time.UTC)
	res, err := Restore(ctx, db, bk, now)
	if err != nil {
		t.Fatal(err)
	}
	wantAside := db + ".before-restore-2026-12-02T03-04-05Z"
	if res.Aside != wantAside || res.Runs != 3 {
		t.Fatalf("aside %q runs %d", res.Aside, res.Runs)
	}
	if fileExists(db+"-wal") || fileExists(db+"-shm") {
		t.Fatal("the old WAL or shm is still beside the restored file")
	}
	if fi, _ := os.Stat(db); fi.Mode().Perm() != 0o600 {
		t.Fatalf("restored mode %v", fi.Mode().Perm())
	}
	count := func(p string) int {
		t.Helper()
		x, err := Open(ctx, p)
		if err != nil {
			t.Fatal(err)
		}
		defer x.Close()
		var n int
		x.SQL().QueryRow(`SELECT count(*) FROM runs`).Scan(&n)
		return n
	}
	if n := count(db); n != 3 {
		t.Fatalf("restored: %d runs, want 3", n)
	}
	if n := count(wantAside); n != 7 {
		t.Fatalf("kept aside: %d runs, want 7 (its WAL moved with it)", n)
	}
}
