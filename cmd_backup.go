package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"strings"
	"time"

	"glowlog/store"
)

// runBackup runs "glowlog backup [--db FILE] [--force] OUT": a consistent
// online copy of the database (it may be in use by a running server),
// checked before it is put at OUT. Exit 2 for bad input (OUT exists,
// missing database), 1 when the copy or its check fails otherwise.
func runBackup(args []string, stdout, stderr io.Writer) int {
	fs := flag.NewFlagSet("backup", flag.ContinueOnError)
	fs.SetOutput(stderr)
	dbPath := fs.String("db", envOr("GLOWLOG_DB", DefaultDB), "SQLite database file to back up (env GLOWLOG_DB)")
	force := fs.Bool("force", false, "replace OUT if it exists")
	fs.Usage = func() {
		fmt.Fprintln(stderr, "usage: glowlog backup [--db FILE] [--force] OUT")
		fs.PrintDefaults()
	}
	pos, err := splitArgs(fs, args)
	if err != nil {
		return exitInput
	}
	if len(pos) != 1 {
		fmt.Fprintln(stderr, "glowlog backup: give exactly one output file OUT")
		return exitInput
	}
	sum, err := store.BackupFile(context.Background(), *dbPath, pos[0], *force)
	if err != nil {
		fmt.Fprintf(stderr, "glowlog backup: %s\n", plainError(err))
		return exitCodeFor(err)
	}
	fmt.Fprintf(stdout, "glowlog backup: wrote %v\n", sum)
	return exitOK
}

// runRestore runs "glowlog restore [--db FILE] BACKUP". The server must
// be stopped: restore refuses while any process has FILE open.
func runRestore(args []string, stdout, stderr io.Writer) int {
	fs := flag.NewFlagSet("restore", flag.ContinueOnError)
	fs.SetOutput(stderr)
	dbPath := fs.String("db", envOr("GLOWLOG_DB", DefaultDB), "SQLite database file to replace (env GLOWLOG_DB)")
	fs.Usage = func() {
		fmt.Fprintln(stderr, "usage: glowlog restore [--db FILE] BACKUP   (stop glowlog serve first)")
		fs.PrintDefaults()
	}
	pos, err := splitArgs(fs, args)
	if err != nil {
		return exitInput
	}
	if len(pos) != 1 {
		fmt.Fprintln(stderr, "glowlog restore: give exactly one BACKUP file")
		return exitInput
	}
	res, err := store.Restore(context.Background(), *dbPath, pos[0], time.Now())
	if err != nil {
		fmt.Fprintf(stderr, "glowlog restore: %s\n", plainError(err))
		return exitCodeFor(err)
	}
	fmt.Fprintf(stdout, "glowlog restore: %s restored from %s (%d runs, %d analyses, %d bytes, integrity ok)\n",
		*dbPath, pos[0], res.Runs, res.Analyses, res.Bytes)
	if res.Aside != "" {
		fmt.Fprintf(stdout, "glowlog restore: the replaced database is kept as %s; delete it when you no longer need it\n", res.Aside)
	}
	return exitOK
}

// exitCodeFor maps store errors to exit codes: problems with the user's
// input (a file that is not a backup, OUT exists) are 2, the rest 1.
func exitCodeFor(err error) int {
	if errors.Is(err, store.ErrInvalid) || errors.Is(err, store.ErrConflict) {
		return exitInput
	}
	return exitError
}

// plainError drops the package prefixes of a store error.
func plainError(err error) string {
	s := err.Error()
	for _, p := range []string{"store: invalid: ", "store: conflict: ", "store: database in use: ", "store: "} {
		s = strings.ReplaceAll(s, p, "")
	}
	return s
}

// splitArgs parses a command's flags anywhere among its positional
// arguments (ParseInterleaved) and returns the positional ones.
func splitArgs(fs *flag.FlagSet, args []string) ([]string, error) {
	if err := ParseInterleaved(fs, args); err != nil {
		return nil, err
	}
	return fs.Args(), nil
}

func envOr(k, def string) string {
	if v := os.Getenv(k); v != "" {
		return v
	}
	return def
}
