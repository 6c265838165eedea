package server

import (
	"bytes"
	"context"
	"path/filepath"
	"strings"
	"testing"

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
	u, err := d.TokenUser(ctx, hashToken(tok))
	if err != nil || u.Name != "mira" || u.Role != store.RoleReviewer {
		t.Errorf("token user %+v, %v", u, err)
	}
	if !CheckPassword(u.PasswordHash, "a-long-password") {
		t.Error("password not stored")
	}
}
