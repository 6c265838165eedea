package server

import (
	"context"
	"fmt"
	"log/slog"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"time"

	"glowlog/store"
)

// BackupSchedule configures the backups that serve writes by itself
// (--backup-dir, --backup-every, --backup-keep).
type BackupSchedule struct {
	Dir   string        // "" turns scheduled backups off
	Every time.Duration // at least MinBackupInterval
	Keep  int           // newest backups kept, at least 1
}

// MinBackupInterval is the shortest --backup-every.
const MinBackupInterval = time.Minute

// Check validates the schedule with messages for the command line.
func (b BackupSchedule) Check() error {
	if b.Dir == "" {
		return nil
	}
	if b.Every < MinBackupInterval {
		return fmt.Errorf("--backup-every %v: give at least %v (for example 6h)", b.Every, MinBackupInterval)
	}
	if b.Keep < 1 {
		return fmt.Errorf("--backup-keep %d: keep at least 1 backup", b.Keep)
	}
	return nil
}

// Scheduled backups are named glowlog-<UTC time>.db, the time in
// store.StampLayout, so that names sort by time.
const backupPrefix, backupSuffix = "glowlog-", ".db"

func backupName(t time.Time) string {
	return backupPrefix + t.UTC().Format(store.StampLayout) + backupSuffix
}

type backupFile struct {
	path string
	at   time.Time
}

// listBackups returns the scheduled backups in dir, oldest first; other
// files are ignored.
func listBackups(dir string) ([]backupFile, error) {
	ents, err := os.ReadDir(dir)
	if err != nil {
		return nil, err
	}
	var out []backupFile
	for _, e := range ents {
		n := e.Name()
		if !e.Type().IsRegular() || !strings.HasPrefix(n, backupPrefix) || !strings.HasSuffix(n, backupSuffix) {
			continue
		}
		at, err := time.Parse(store.StampLayout, strings.TrimSuffix(strings.TrimPrefix(n, backupPrefix), backupSuffix))
		if err != nil {
			continue
		}
		out = append(out, backupFile{filepath.Join(dir, n), at})
	}
	sort.Slice(out, func(i, j int) bool { return out[i].at.Before(out[j].at) })
	return out, nil
}

// nextBackupIn is how long to wait before the next scheduled backup when
// the newest one was written at newest (zero time: none yet).
func nextBackupIn(newest, now time.Time, every time.Duration) time.Duration {
	if newest.IsZero() {
		return 0
	}
	d := newest.Add(every).Sub(now)
	if d < 0 || d > every { // overdue, or a clock that went back
		return 0
	}
	return d
}

// backupNow writes one scheduled backup and removes the oldest beyond
// Keep, logging each.
func backupNow(ctx context.Context, db *store.DB, b BackupSchedule, now time.Time, log *slog.Logger) error {
	sum, err := db.Backup(ctx, filepath.Join(b.Dir, backupName(now)), false)
	if err != nil {
		return err
	}
	log.Info("backup written", "file", sum.Path, "runs", sum.Runs, "analyses", sum.Analyses,
		"bytes", sum.Bytes, "took", sum.Elapsed.Round(time.Millisecond), "integrity", "ok")
	all, err := listBackups(b.Dir)
	if err != nil {
		return err
	}
	for len(all) > b.Keep {
		if err := os.Remove(all[0].path); err != nil {
			return err
		}
		log.Info("old backup removed", "file", all[0].path, "keep", b.Keep)
		all = all[1:]
	}
	return nil
}

// RunBackups writes scheduled backups until ctx ends: the first when the
// newest in Dir is older than Every (at once if there is none), then
// every Every. A failed backup is logged and tried again at the next
// interval.
func RunBackups(ctx context.Context, db *store.DB, b BackupSchedule, log *slog.Logger) {
	var newest time.Time
	if all, err := listBackups(b.Dir); err == nil && len(all) > 0 {
		newest = all[len(all)-1].at
	}
	wait := nextBackupIn(newest, time.Now(), b.Every)
	for {
		t := time.NewTimer(wait)
		select {
		case <-ctx.Done():
			t.Stop()
			return
		case <-t.C:
		}
		if err := backupNow(ctx, db, b, time.Now(), log); err != nil && ctx.Err() == nil {
			log.Error("scheduled backup failed", "dir", b.Dir, "err", err)
		}
		wait = b.Every
	}
}
