package store

import (
	"context"
	"errors"
	"os"
	"path/filepath"
	"testing"
	"time"
)

// The database file and its -wal and -shm are private (0600), both when
// Open creates them and when they exist with a wider mode.
func TestDatabaseFilesPrivate(t *testing.T) {
	ctx := context.Background()
	path := filepath.Join(t.TempDir(), "p.db")
	check := func(when string) {
		t.Helper()
		for _, p := range []string{path, path + "-wal", path + "-shm"} {
			fi, err := os.Stat(p)
			if err != nil {
				t.Fatalf("%s: %v", when, err)
			}
			if m := fi.Mode().Perm(); m != 0o600 {
				t.Errorf("%s: %s has mode %o, want 600", when, filepath.Base(p), m)
			}
		}
	}
	d, err := Open(ctx, path)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := d.CreateUser(ctx, "ivo", RoleViewer, "x"); err != nil {
		t.Fatal(err)
	}
	check("new database")
	d.Close()
	for _, p := range []string{path, path + "-wal", path + "-shm"} {
		if _, err := os.Stat(p); err == nil {
			if err := os.Chmod(p, 0o644); err != nil {
				t.Fatal(err)
			}
		}
	}
	d, err = Open(ctx, path)
	if err != nil {
		t.Fatal(err)
	}
	defer d.Close()
	if _, err := d.CreateUser(ctx, "ada", RoleViewer, "x"); err != nil {
		t.Fatal(err)
	}
	check("reopened after chmod 644")
}

func TestAccountControls(t *testing.T) {
	ctx := context.Background()
	d, err := Open(ctx, filepath.Join(t.TempDir(), "a.db"))
	if err != nil {
		t.Fatal(err)
	}
	defer d.Close()
	u, err := d.CreateUser(ctx, "ivo", RoleOperator, "h1")
	if err != nil {
		t.Fatal(err)
	}
	sess := []byte("session-hash")
	if err := d.CreateSession(ctx, sess, u.ID, time.Hour); err != nil {
		t.Fatal(err)
	}
	tok := []byte("token-hash")
	if _, err := d.CreateToken(ctx, u.ID, "pc", tok); err != nil {
		t.Fatal(err)
	}
	// Disabling stops both at once; enabling brings the token back, not
	// the session.
	if err := d.SetUserDisabled(ctx, u.ID, true); err != nil {
		t.Fatal(err)
	}
	if _, err := d.SessionUser(ctx, sess); !errors.Is(err, ErrNotFound) {
		t.Errorf("session of a disabled user: %v", err)
	}
	if _, err := d.LookupToken(ctx, tok); !errors.Is(err, ErrNotFound) {
		t.Errorf("token of a disabled user: %v", err)
	}
	if err := d.SetUserDisabled(ctx, u.ID, false); err != nil {
		t.Fatal(err)
	}
	if _, err := d.LookupToken(ctx, tok); err != nil {
		t.Errorf("token after re-enabling: %v", err)
	}
	if _, err := d.SessionUser(ctx, sess); !errors.Is(err, ErrNotFound) {
		t.Errorf("session came back after re-enabling: %v", err)
	}
	// The must-change flag is cleared by a password change, which can
	// revoke the tokens.
	if err := d.SetMustChangePassword(ctx, u.ID, true); err != nil {
		t.Fatal(err)
	}
	if got, _ := d.UserByID(ctx, u.ID); !got.MustChangePassword {
		t.Error("flag not stored")
	}
	if err := d.ChangePassword(ctx, u.ID, "h2", true); err != nil {
		t.Fatal(err)
	}
	if got, _ := d.UserByID(ctx, u.ID); got.MustChangePassword || got.PasswordHash != "h2" {
		t.Errorf("after change: %+v", got)
	}
	if _, err := d.LookupToken(ctx, tok); !errors.Is(err, ErrNotFound) {
		t.Errorf("token after a password change with revocation: %v", err)
	}
	// TouchToken never moves the time backwards.
	tok2 := []byte("token-2")
	t2, _ := d.CreateToken(ctx, u.ID, "pc2", tok2)
	now := time.Unix(1_800_000_000, 0)
	if err := d.TouchToken(ctx, t2.ID, now); err != nil {
		t.Fatal(err)
	}
	if err := d.TouchToken(ctx, t2.ID, now.Add(-time.Hour)); err != nil {
		t.Fatal(err)
	}
	if a, _ := d.LookupToken(ctx, tok2); !a.LastUsedAt.Equal(now) {
		t.Errorf("last used %v, want %v", a.LastUsedAt, now)
	}
}
