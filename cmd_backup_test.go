package main

import (
	"bufio"
	"bytes"
	"context"
	"database/sql"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"time"

	"glowlog/store"
)

// cli runs one command line and returns its exit code and output.
func cli(args ...string) (int, string, string) {
	var out, errb bytes.Buffer
	code := run(args, nil, &out, &errb)
	return code, out.String(), errb.String()
}

func integrityOK(t *testing.T, path string) {
	t.Helper()
	db, err := sql.Open("sqlite", "file:"+path)
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	var res string
	if err := db.QueryRow(`PRAGMA integrity_check`).Scan(&res); err != nil || res != "ok" {
		t.Fatalf("integrity_check of %s: %q %v", path, res, err)
	}
}

// TestBackupRestoreCommandsUnderLoad plays the operator: "glowlog backup"
// runs (as its own connection pool, like a second process) while four
// goroutines insert runs through the store of the "server"; the server
// stops; "glowlog restore" puts the backup back. The restored database
// passes integrity_check and has every run acknowledged before the backup
// started; the replaced one is kept aside with all runs.
func TestBackupRestoreCommandsUnderLoad(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	live := filepath.Join(dir, "glowlog.db")
	d, err := store.Open(ctx, live)
	if err != nil {
		t.Fatal(err)
	}
	u, err := d.CreateUser(ctx, "opal", store.RoleOperator, "x")
	if err != nil {
		t.Fatal(err)
	}
	var mu sync.Mutex
	var acked []int64
	var wg sync.WaitGroup
	const workers, each = 4, 50
	for w := range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range each {
				id, err := d.CreateRun(ctx, u.ID, store.RunInput{Title: fmt.Sprintf("load %d/%d", w, i),
					StartedAt: time.Date(2026, 5, 1, w, i, 0, 0, time.UTC), SourceType: "dc_glow"})
				if err != nil {
					t.Error(err)
					return
				}
				mu.Lock()
				acked = append(acked, id)
				mu.Unlock()
			}
		}()
	}
	for { // let some inserts be acknowledged first
		mu.Lock()
		n := len(acked)
		mu.Unlock()
		if n >= 30 || t.Failed() {
			break
		}
		time.Sleep(time.Millisecond)
	}
	mu.Lock()
	before := append([]int64(nil), acked...)
	mu.Unlock()
	out := filepath.Join(dir, "backups", "b.db")
	os.Mkdir(filepath.Dir(out), 0o700)
	code, stdout, stderr := cli("backup", "--db", live, out)
	wg.Wait()
	if code != exitOK {
		t.Fatalf("backup: exit %d %s", code, stderr)
	}
	for _, want := range []string{"wrote " + out, " runs, ", " analyses, ", " bytes, ", " s, integrity ok"} {
		if !strings.Contains(stdout, want) {
			t.Errorf("summary %q lacks %q", stdout, want)
		}
	}
	if strings.Count(strings.TrimSpace(stdout), "\n") != 0 {
		t.Errorf("summary is not one line: %q", stdout)
	}
	if fi, err := os.Stat(out); err != nil || fi.Mode().Perm() != 0o600 {
		t.Fatalf("backup file: %v %v", fi, err)
	}
	// An existing OUT is refused without --force and replaced with it.
	if code, _, stderr := cli("backup", "--db", live, out); code != exitInput || !strings.Contains(stderr, "already exists (--force replaces it)") {
		t.Fatalf("existing OUT: exit %d %q", code, stderr)
	}
	other := filepath.Join(dir, "backups", "c.db")
	if code, _, stderr := cli("backup", "--db", live, "--force", other); code != exitOK {
		t.Fatalf("--force after OUT: exit %d %s", code, stderr)
	}
	total := len(acked)
	if err := d.Close(); err != nil { // the server stops
		t.Fatal(err)
	}

	code, stdout, stderr = cli("restore", "--db", live, out)
	if code != exitOK {
		t.Fatalf("restore: exit %d %s", code, stderr)
	}
	if !strings.Contains(stdout, "restored from "+out) || !strings.Contains(stdout, "kept as "+live+".before-restore-") {
		t.Errorf("restore output %q", stdout)
	}
	integrityOK(t, live)
	rd, err := store.Open(ctx, live)
	if err != nil {
		t.Fatal(err)
	}
	defer rd.Close()
	for _, id := range before {
		if _, err := rd.GetRun(ctx, id); err != nil {
			t.Fatalf("run %d acknowledged before the backup is missing after restore: %v", id, err)
		}
	}
	asides, _ := filepath.Glob(live + ".before-restore-*")
	if len(asides) != 1 {
		t.Fatalf("kept aside: %v", asides)
	}
	var n int
	ad, err := store.Open(ctx, asides[0])
	if err != nil {
		t.Fatal(err)
	}
	ad.SQL().QueryRow(`SELECT count(*) FROM runs`).Scan(&n)
	ad.Close()
	if n != total {
		t.Fatalf("the replaced database kept aside has %d runs, want %d", n, total)
	}
}

// TestHoldDatabase is not a test: run by TestRestoreRefusesWhileInUse as
// a separate process, it opens the database like a running server and
// keeps it open until its standard input closes.
func TestHoldDatabase(t *testing.T) {
	p := os.Getenv("GLOWLOG_TEST_HOLD_DB")
	if p == "" {
		t.Skip("helper process only")
	}
	d, err := store.Open(context.Background(), p)
	if err != nil {
		t.Fatal(err)
	}
	defer d.Close()
	fmt.Println("holding")
	bufio.NewReader(os.Stdin).ReadString('\n')
}

// TestRestoreRefusesWhileInUse: restore refuses while another process
// has the database open and changes nothing; it succeeds once that
// process has ended.
func TestRestoreRefusesWhileInUse(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	live := filepath.Join(dir, "glowlog.db")
	d, err := store.Open(ctx, live)
	if err != nil {
		t.Fatal(err)
	}
	bk := filepath.Join(dir, "bk.db")
	if _, err := d.Backup(ctx, bk, false); err != nil {
		t.Fatal(err)
	}
	d.Close()

	cmd := exec.Command(os.Args[0], "-test.run=^TestHoldDatabase$")
	cmd.Env = append(os.Environ(), "GLOWLOG_TEST_HOLD_DB="+live)
	stdin, _ := cmd.StdinPipe()
	stdoutPipe, _ := cmd.StdoutPipe()
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	line, _ := bufio.NewReader(stdoutPipe).ReadString('\n')
	if strings.TrimSpace(line) != "holding" {
		stdin.Close()
		cmd.Wait()
		t.Fatalf("helper process: %q", line)
	}
	before, _ := os.ReadFile(live)
	code, _, stderr := cli("restore", "--db", live, bk)
	stdin.Close()
	cmd.Wait()
	if code != exitError || !strings.Contains(stderr, "open in another process") || !strings.Contains(stderr, "stop it, then restore") {
		t.Fatalf("restore while in use: exit %d %q", code, stderr)
	}
	if after, _ := os.ReadFile(live); !bytes.Equal(before, after) {
		t.Fatal("a refused restore changed the database")
	}
	if m, _ := filepath.Glob(live + ".before-restore-*"); len(m) != 0 {
		t.Fatalf("a refused restore moved the database: %v", m)
	}
	if code, _, stderr := cli("restore", "--db", live, bk); code != exitOK {
		t.Fatalf("restore after the process ended: exit %d %s", code, stderr)
	}
}

func TestBackupRestoreBadInput(t *testing.T) {
	dir := t.TempDir()
	text := filepath.Join(dir, "notes.txt")
	os.WriteFile(text, []byte("these are notes, not a database\n"), 0o600)
	for _, c := range []struct {
		args []string
		want string
	}{
		{[]string{"backup"}, "exactly one output file"},
		{[]string{"backup", "--db", filepath.Join(dir, "none.db"), filepath.Join(dir, "o.db")}, "does not exist"},
		{[]string{"backup", "--db", text, filepath.Join(dir, "o.db")}, "not a SQLite database"},
		{[]string{"restore", "--db", filepath.Join(dir, "x.db")}, "exactly one BACKUP"},
		{[]string{"restore", "--db", filepath.Join(dir, "x.db"), text}, "not a SQLite database"},
		{[]string{"restore", "--db", filepath.Join(dir, "x.db"), filepath.Join(dir, "none.db")}, "does not exist"},
	} {
		code, _, stderr := cli(c.args...)
		if code != exitInput || !strings.Contains(stderr, c.want) {
			t.Errorf("%v: exit %d %q, want 2 and %q", c.args, code, stderr, c.want)
		}
	}
	if fileNames, _ := filepath.Glob(filepath.Join(dir, "*")); len(fileNames) != 1 {
		t.Errorf("bad input left files: %v", fileNames)
	}
	code, out, _ := cli("--help")
	if code != exitOK || !strings.Contains(out, "\n  backup ") || !strings.Contains(out, "\n  restore ") {
		t.Errorf("--help: exit %d\n%s", code, out)
	}
}
