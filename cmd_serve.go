package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"log/slog"
	"net"
	"net/http"
	"os"
	"os/signal"
	"path/filepath"
	"syscall"
	"time"

	"glowlog/server"
	"glowlog/store"
)

// Defaults of glowlog serve.
const (
	DefaultAddr = "127.0.0.1:8080"
	DefaultDB   = "glowlog.db"
)

// ServeCommand runs "glowlog serve": it opens (or creates) the database,
// creates the first admin account with a one-time password, seeds the demo
// scenario into an empty database unless --no-demo, and serves until
// SIGINT or SIGTERM.
func ServeCommand(args []string, stdout, stderr io.Writer) int {
	fs := flag.NewFlagSet("serve", flag.ContinueOnError)
	fs.SetOutput(stderr)
	addr := fs.String("addr", envOr("GLOWLOG_ADDR", DefaultAddr), "listen address HOST:PORT (env GLOWLOG_ADDR)")
	dbPath := fs.String("db", envOr("GLOWLOG_DB", DefaultDB), "SQLite database file (env GLOWLOG_DB)")
	noDemo := fs.Bool("no-demo", os.Getenv("GLOWLOG_NO_DEMO") != "", "do not seed the demo scenario into an empty database (env GLOWLOG_NO_DEMO)")
	secure := fs.Bool("secure-cookies", os.Getenv("GLOWLOG_SECURE_COOKIES") != "", "mark cookies Secure (behind TLS) (env GLOWLOG_SECURE_COOKIES)")
	proxies := server.EnvList("GLOWLOG_TRUSTED_PROXY")
	fs.Func("trusted-proxy", "believe X-Forwarded-For and X-Forwarded-Proto only from this proxy address or CIDR range; repeatable (env GLOWLOG_TRUSTED_PROXY, comma-separated)",
		func(v string) error { proxies = append(proxies, v); return nil })
	syncMode := fs.String("sync", envOr("GLOWLOG_SYNC", store.SyncNormal), "when commits reach the disk: normal (a commit survives a crash of glowlog; the last ones can be lost on power loss) or full (fsync at every commit; survives power loss) (env GLOWLOG_SYNC)")
	var bk server.BackupSchedule
	fs.StringVar(&bk.Dir, "backup-dir", os.Getenv("GLOWLOG_BACKUP_DIR"), "write checked backups into DIR on a schedule (env GLOWLOG_BACKUP_DIR)")
	fs.DurationVar(&bk.Every, "backup-every", 6*time.Hour, "interval of scheduled backups")
	fs.IntVar(&bk.Keep, "backup-keep", 14, "how many scheduled backups to keep (the newest)")
	if err := ParseInterleaved(fs, args); err != nil {
		return flagExit(err)
	}
	trusted, err := server.ParseTrustedProxies(proxies)
	if err != nil {
		fmt.Fprintf(stderr, "glowlog serve: %v\n", err)
		return ExitInput
	}
	sync, err := store.ParseSync(*syncMode)
	if err != nil {
		fmt.Fprintf(stderr, "glowlog serve: --sync %q: use full or normal\n", *syncMode)
		return ExitInput
	}
	if err := bk.Check(); err != nil {
		fmt.Fprintf(stderr, "glowlog serve: %v\n", err)
		return ExitInput
	}
	extra := serveOptions{Store: store.Options{Sync: sync}, Backups: bk}
	log := slog.New(slog.NewTextHandler(stderr, nil))
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	defer stop()
	if err := serve(ctx, *addr, *dbPath, !*noDemo, server.Options{SecureCookies: *secure, TrustedProxies: trusted}, log, stdout, extra); err != nil {
		fmt.Fprintf(stderr, "glowlog serve: %v\n", err)
		return ExitError
	}
	return ExitOK
}

// serveOptions are the storage settings of serve: durability and
// scheduled backups.
type serveOptions struct {
	Store   store.Options
	Backups server.BackupSchedule
}

func serve(ctx context.Context, addr, dbPath string, demo bool, opt server.Options, log *slog.Logger, stdout io.Writer, extra serveOptions) error {
	server.SetMemoryLimit()
	if dir := filepath.Dir(dbPath); dir != "." {
		if err := os.MkdirAll(dir, 0o755); err != nil {
			return err
		}
	}
	db, err := store.Open(ctx, dbPath, extra.Store)
	if err != nil {
		return err
	}
	defer db.Close()
	log.Info("database", "file", dbPath, "sync", extra.Store.Sync, "backup_dir", extra.Backups.Dir)
	opt.Log = log
	s := server.New(db, opt)
	if err := s.Bootstrap(ctx, demo, stdout); err != nil {
		return err
	}
	if extra.Backups.Dir != "" {
		if err := os.MkdirAll(extra.Backups.Dir, 0o700); err != nil {
			return err
		}
		bctx, stopBackups := context.WithCancel(ctx)
		done := make(chan struct{})
		go func() { defer close(done); server.RunBackups(bctx, db, extra.Backups, log) }()
		defer func() { stopBackups(); <-done }() // before db.Close
	}
	// Load the trend column store (and read the default trend: all runs,
	// T_exc against time) once in the background, so that the first
	// visitor of the Trends page need not wait for it.
	go func() {
		t := time.Now()
		if _, err := db.TrendSeries(ctx, store.RunFilter{}, "started_at", "texc_k"); err != nil && ctx.Err() == nil {
			log.Warn("warming the trend cache", "err", err)
			return
		}
		log.Info("trend columns loaded", "runs", db.TrendColumnRuns(), "took", time.Since(t).Round(time.Millisecond))
	}()
	ln, err := net.Listen("tcp", addr)
	if err != nil {
		return err
	}
	srv := &http.Server{Handler: s, ReadHeaderTimeout: 10 * time.Second, IdleTimeout: 2 * time.Minute}
	fmt.Fprintf(stdout, "glowlog: serving http://%s (database %s); Ctrl-C stops\n", ln.Addr(), dbPath)
	errc := make(chan error, 1)
	go func() { errc <- srv.Serve(ln) }()
	s.Jobs.Start(ctx)
	select {
	case err := <-errc:
		if !errors.Is(err, http.ErrServerClosed) {
			return err
		}
	case <-ctx.Done():
		log.Info("shutting down")
	}
	sctx, cancel := context.WithTimeout(context.Background(), 10*time.Second)
	defer cancel()
	err = srv.Shutdown(sctx)
	s.WaitBackground()
	return err
}
