package main

import (
	"bufio"
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"strings"

	"glowlog/server"
	"glowlog/store"
)

// UserCommand runs "glowlog user add NAME --role ROLE [--db FILE]": it
// creates an account whose password is the first line of stdin (at least
// 10 characters). Exit 2 with one line on stderr for bad input.
func UserCommand(args []string, stdin io.Reader, stdout, stderr io.Writer) int {
	if len(args) == 0 || args[0] != "add" {
		fmt.Fprintln(stderr, "usage: glowlog user add NAME --role viewer|operator|reviewer|admin [--db FILE] (password on standard input)")
		return ExitInput
	}
	fs := flag.NewFlagSet("user add", flag.ContinueOnError)
	fs.SetOutput(stderr)
	dbPath := fs.String("db", envOr("GLOWLOG_DB", DefaultDB), "SQLite database file (env GLOWLOG_DB)")
	roleName := fs.String("role", "", "role: viewer, operator, reviewer or admin (required)")
	pos, err := splitCommandArgs(fs, args[1:])
	if err != nil {
		return flagExit(err)
	}
	if len(pos) != 1 {
		fmt.Fprintln(stderr, "glowlog user add: give exactly one user NAME")
		return ExitInput
	}
	if *roleName == "" {
		fmt.Fprintln(stderr, "glowlog user add: --role is required (viewer, operator, reviewer or admin)")
		return ExitInput
	}
	role, err := store.ParseRole(*roleName)
	if err != nil {
		fmt.Fprintf(stderr, "glowlog user add: %s\n", strings.TrimPrefix(err.Error(), "store: invalid: "))
		return ExitInput
	}
	line, err := bufio.NewReader(io.LimitReader(stdin, 4096)).ReadString('\n')
	if err != nil && !errors.Is(err, io.EOF) {
		fmt.Fprintf(stderr, "glowlog user add: reading the password from standard input: %v\n", err)
		return ExitInput
	}
	pw := strings.TrimRight(line, "\r\n")
	if msg := server.PasswordProblem(pos[0], pw); msg != "" {
		fmt.Fprintf(stderr, "glowlog user add: the password (first line of standard input): %s\n", msg)
		return ExitInput
	}
	hash, err := server.HashPassword(pw)
	if err != nil {
		fmt.Fprintf(stderr, "glowlog user add: %v\n", err)
		return ExitInput
	}
	ctx := store.WithActor(context.Background(), store.Actor{Via: store.ViaCLI})
	db, err := store.Open(ctx, *dbPath)
	if err != nil {
		fmt.Fprintf(stderr, "glowlog user add: %v\n", err)
		return ExitError
	}
	defer db.Close()
	u, err := db.CreateUser(ctx, pos[0], role, hash)
	if store.IsBusy(err) {
		fmt.Fprintf(stderr, "glowlog user add: %s: nothing was stored, run the command again\n", busyMessage(*dbPath))
		return ExitError
	}
	if err != nil {
		fmt.Fprintf(stderr, "glowlog user add: %s\n", server.PlainStoreError(err))
		if errors.Is(err, store.ErrInvalid) || errors.Is(err, store.ErrConflict) {
			return ExitInput
		}
		return ExitError
	}
	fmt.Fprintf(stdout, "glowlog: created %s %q (id %d) in %s\n", u.Role, u.Name, u.ID, *dbPath)
	return ExitOK
}

// TokenCommand runs "glowlog token create NAME [--db FILE] [--label L]":
// it prints a new API token for user NAME, once (only its hash is kept).
func TokenCommand(args []string, stdout, stderr io.Writer) int {
	if len(args) == 0 || args[0] != "create" {
		fmt.Fprintln(stderr, "usage: glowlog token create NAME [--label L] [--db FILE]")
		return ExitInput
	}
	fs := flag.NewFlagSet("token create", flag.ContinueOnError)
	fs.SetOutput(stderr)
	dbPath := fs.String("db", envOr("GLOWLOG_DB", DefaultDB), "SQLite database file (env GLOWLOG_DB)")
	label := fs.String("label", "command line", "name of the token, shown on the account page")
	pos, err := splitCommandArgs(fs, args[1:])
	if err != nil {
		return flagExit(err)
	}
	if len(pos) != 1 {
		fmt.Fprintln(stderr, "glowlog token create: give exactly one user NAME")
		return ExitInput
	}
	if l := strings.TrimSpace(*label); l == "" || len(l) > 100 {
		fmt.Fprintln(stderr, "glowlog token create: --label must have 1–100 characters")
		return ExitInput
	}
	ctx := store.WithActor(context.Background(), store.Actor{Via: store.ViaCLI})
	db, err := store.Open(ctx, *dbPath)
	if err != nil {
		fmt.Fprintf(stderr, "glowlog token create: %v\n", err)
		return ExitError
	}
	defer db.Close()
	u, err := db.UserByName(ctx, pos[0])
	if errors.Is(err, store.ErrNotFound) {
		fmt.Fprintf(stderr, "glowlog token create: no user %q in %s\n", pos[0], *dbPath)
		return ExitInput
	} else if err != nil {
		fmt.Fprintf(stderr, "glowlog token create: %v\n", err)
		return ExitError
	}
	if u.Disabled {
		fmt.Fprintf(stderr, "glowlog token create: user %q is disabled\n", u.Name)
		return ExitInput
	}
	tok, h := server.NewToken()
	if _, err := db.CreateToken(ctx, u.ID, strings.TrimSpace(*label), h); store.IsBusy(err) {
		fmt.Fprintf(stderr, "glowlog token create: %s: no token was made, run the command again\n", busyMessage(*dbPath))
		return ExitError
	} else if err != nil {
		fmt.Fprintf(stderr, "glowlog token create: %v\n", err)
		return ExitError
	}
	fmt.Fprintln(stdout, tok)
	fmt.Fprintf(stderr, "glowlog: new API token for %q printed above; it is shown only this once\n", u.Name)
	return ExitOK
}

// busyMessage says why a write to path found the database locked: another
// process kept writing for longer than the busy timeout, most often a
// server's first start while it stores the demo scenario (about 15 s).
func busyMessage(path string) string {
	return fmt.Sprintf("%s was busy for 5 s (another glowlog process is writing to it, e.g. a server's first start storing the demo runs)", path)
}
