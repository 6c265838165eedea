package main

import (
	"bytes"
	"context"
	"crypto/sha256"
	"path/filepath"
	"strings"
	"testing"

	"glowlog/server"
	"glowlog/store"
)

func TestUserAndTokenCommands(t *testing.T) {
	db := filepath.Join(t.TempDir(), "u.db")
	var out, errb bytes.Buffer
	run := func(code int, f func() int) {
		t.Helper()
		out.Reset()
		errb.Reset()
		if got := f(); got != code {
			t.Fatalf("exit %d, want %d; stderr %q", got, code, errb.String())
		}
	}
	run(ExitOK, func() int {
		return UserCommand([]string{"add", "mira", "--role", "reviewer", "--db", db}, strings.NewReader("a-long-password\n"), &out, &errb)
	})
	for _, c := range []struct {
		args []string
		pw   string
		want string
	}{
		{[]string{"add", "kit", "--role", "operator", "--db", db}, "short\n", "10 characters"},
		{[]string{"add", "kit", "--role", "boss", "--db", db}, "a-long-password\n", "unknown role"},
		{[]string{"add", "kit", "--db", db}, "a-long-password\n", "--role"},
		{[]string{"add", "mira", "--role", "viewer", "--db", db}, "a-long-password\n", "exists"},
	} {
		run(ExitInput, func() int { return UserCommand(c.args, strings.NewReader(c.pw), &out, &errb) })
		if !strings.Contains(errb.String(), c.want) {
			t.Errorf("%v: stderr %q, want %q", c.args, errb.String(), c.want)
		}
	}
	t.Setenv("GLOWLOG_DB", db)
	run(ExitOK, func() int { return TokenCommand([]string{"create", "mira", "--label", "ci"}, &out, &errb) })
	tok := strings.TrimSpace(out.String())
	run(ExitInput, func() int { return TokenCommand([]string{"create", "nobody"}, &out, &errb) })

	ctx := context.Background()
	d, err := store.Open(ctx, db)
	if err != nil {
		t.Fatal(err)
	}
	defer d.Close()
	u, err := d.TokenUser(ctx, tokenHash(tok))
	if err != nil || u.Name != "mira" || u.Role != store.RoleReviewer {
		t.Errorf("token user %+v, %v", u, err)
	}
	if !server.CheckPassword(u.PasswordHash, "a-long-password") {
		t.Error("password not stored")
	}
}

// tokenHash is how the server stores an API token (SHA-256 of the token:
// server/auth.go hashToken).
func tokenHash(tok string) []byte {
	h := sha256.Sum256([]byte(tok))
	return h[:]
}

// TestAuditCLIActor: a change made by a command (glowlog user add) is in
// the audit trail as made through the command line, by no signed-in user.
func TestAuditCLIActor(t *testing.T) {
	path := filepath.Join(t.TempDir(), "cli.db")
	var out, errb bytes.Buffer
	if code := UserCommand([]string{"add", "mira", "--role", "reviewer", "--db", path}, strings.NewReader("a-long-password\n"), &out, &errb); code != ExitOK {
		t.Fatalf("user add: %d %s", code, errb.String())
	}
	db, err := store.Open(context.Background(), path)
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	es, err := db.AuditLog(context.Background(), store.AuditFilter{Kind: store.AuditUser})
	if err != nil {
		t.Fatal(err)
	}
	if len(es) != 1 || es[0].Via != store.ViaCLI || es[0].ActorID != nil {
		t.Errorf("user add entries: %+v", es)
	}
}
