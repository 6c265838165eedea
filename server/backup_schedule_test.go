package server

import (
	"bytes"
	"context"
	"log/slog"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"glowlog/store"
)

// TestBackupNowKeepsNewest writes five scheduled backups six hours apart
// with --backup-keep 3: the three newest remain (0600, checked), each
// write and removal is logged, and other files in the directory stay.
func TestBackupNowKeepsNewest(t *testing.T) {
	ctx := context.Background()
	db := testDB(t)
	if _, err := db.CreateUser(ctx, "opal", store.RoleOperator, "x"); err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	other := filepath.Join(dir, "notes.txt")
	os.WriteFile(other, []byte("keep"), 0o600)
	var logb bytes.Buffer
	log := slog.New(slog.NewTextHandler(&logb, nil))
	sch := BackupSchedule{Dir: dir, Every: 6 * time.Hour, Keep: 3}
	t0 := time.Date(2026, 12, 1, 0, 0, 0, 0, time.UTC)
	for i := range 5 {
		if err := backupNow(ctx, db, sch, t0.Add(time.Duration(i)*6*time.Hour), log); err != nil {
			t.Fatal(err)
		}
	}
	all, err := listBackups(dir)
	if err != nil {
		t.Fatal(err)
	}
	var names []string
	for _, b := range all {
		names = append(names, filepath.Base(b.path))
		fi, _ := os.Stat(b.path)
		if fi.Mode().Perm() != 0o600 {
			t.Errorf("%s: mode %v", b.path, fi.Mode().Perm())
		}
		if _, err := store.Verify(ctx, b.path); err != nil {
			t.Error(err)
		}
	}
	want := []string{"glowlog-2026-12-01T12-00-00Z.db", "glowlog-2026-12-01T18-00-00Z.db", "glowlog-2026-12-02T00-00-00Z.db"}
	if strings.Join(names, " ") != strings.Join(want, " ") {
		t.Fatalf("kept %v, want %v", names, want)
	}
	if _, err := os.Stat(other); err != nil {
		t.Fatal("an unrelated file was removed")
	}
	if n := strings.Count(logb.String(), "backup written"); n != 5 {
		t.Errorf("%d backups logged, want 5:\n%s", n, logb.String())
	}
	if n := strings.Count(logb.String(), "old backup removed"); n != 2 {
		t.Errorf("%d removals logged, want 2", n)
	}
}

func TestNextBackupIn(t *testing.T) {
	now := time.Date(2026, 12, 2, 12, 0, 0, 0, time.UTC)
	for _, c := range []struct {
		newest time.Time
		want   time.Duration
	}{
		{time.Time{}, 0},
		{now.Add(-2 * time.Hour), 4 * time.Hour},
		{now.Add(-7 * time.Hour), 0},
		{now.Add(3 * time.Hour), 0}, // from the future: the clock went back
	} {
		if got := nextBackupIn(c.newest, now, 6*time.Hour); got != c.want {
			t.Errorf("newest %v: %v, want %v", c.newest, got, c.want)
		}
	}
}

// TestRunBackupsFirstAtStart: with no backup yet, serve's schedule writes
// one at once.
func TestRunBackupsFirstAtStart(t *testing.T) {
	db := testDB(t)
	dir := t.TempDir()
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan struct{})
	go func() {
		defer close(done)
		RunBackups(ctx, db, BackupSchedule{Dir: dir, Every: time.Hour, Keep: 2}, slog.New(slog.NewTextHandler(&bytes.Buffer{}, nil)))
	}()
	var all []backupFile
	for range 1000 { // bounded wait for the first backup
		all, _ = listBackups(dir)
		if len(all) > 0 {
			break
		}
		time.Sleep(5 * time.Millisecond)
	}
	cancel()
	<-done
	if len(all) != 1 {
		t.Fatalf("%d backups after start, want 1", len(all))
	}
}
