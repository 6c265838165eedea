package main

import (
	"bytes"
	"context"
	"io"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"

	"glowlog/server"
	"glowlog/store"
)

// gate stands between the watcher and the real application: it can play
// a server that is down (503), or one whose answer is lost after the
// request was carried out (the application stores, the client gets 502).
type gate struct {
	app http.Handler

	mu        sync.Mutex
	down      bool
	loseNext  int // answers to lose, POSTs only
	attempts  int // POSTs to .../measurements seen, down or not
	runPosts  int // POST /api/v1/runs carried out
	measPosts int // POST .../measurements carried out
	withPlots int // POST .../measurements asking for the plot series
}

func (g *gate) ServeHTTP(w http.ResponseWriter, r *http.Request) {
	meas := r.Method == http.MethodPost && strings.HasSuffix(r.URL.Path, "/measurements")
	newRun := r.Method == http.MethodPost && r.URL.Path == "/api/v1/runs"
	g.mu.Lock()
	if meas {
		g.attempts++
		if r.URL.Query().Get("plots") != "none" {
			g.withPlots++
		}
	}
	down := g.down
	lose := false
	if !down && (meas || newRun) && g.loseNext > 0 {
		g.loseNext--
		lose = true
	}
	if !down && meas {
		g.measPosts++
	}
	if !down && newRun {
		g.runPosts++
	}
	g.mu.Unlock()
	switch {
	case down:
		http.Error(w, `{"error": "down for maintenance"}`, http.StatusServiceUnavailable)
	case lose:
		g.app.ServeHTTP(httptest.NewRecorder(), r)
		http.Error(w, "bad gateway", http.StatusBadGateway)
	default:
		g.app.ServeHTTP(w, r)
	}
}

func (g *gate) counts() (attempts, measPosts, runPosts int) {
	g.mu.Lock()
	defer g.mu.Unlock()
	return g.attempts, g.measPosts, g.runPosts
}

// watchEnv is the real application on a temporary database behind a gate,
// an operator's token, one run, and a folder to follow.
type watchEnv struct {
	t     *testing.T
	db    *store.DB
	gate  *gate
	srv   *httptest.Server
	token string
	runID int64
	dir   string
	clock time.Time
	last  *watcher // the running watcher, stopped when the next starts
}

func newWatchEnv(t *testing.T) *watchEnv {
	t.Helper()
	ctx := context.Background()
	db, err := store.Open(ctx, filepath.Join(t.TempDir(), "t.db"))
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { db.Close() })
	app := server.New(db, server.Options{Log: slog.New(slog.NewTextHandler(io.Discard, nil))})
	u, err := db.CreateUser(ctx, "ada", store.RoleOperator, "x")
	if err != nil {
		t.Fatal(err)
	}
	tok, h := server.NewToken()
	if _, err := db.CreateToken(ctx, u.ID, "watch", h); err != nil {
		t.Fatal(err)
	}
	g := &gate{app: app}
	srv := httptest.NewServer(g)
	t.Cleanup(srv.Close)
	e := &watchEnv{t: t, db: db, gate: g, srv: srv, token: tok, dir: t.TempDir(), clock: time.Date(2026, 3, 4, 9, 0, 0, 0, time.UTC)}
	req, _ := http.NewRequest(http.MethodPost, srv.URL+"/api/v1/runs", strings.NewReader(
		`{"title": "line 3 spectra", "started_at": "2026-03-04T09:00:00Z", "source_type": "plasma_jet", "chamber": "Jet bench J2"}`))
	req.Header.Set("Authorization", "Bearer "+tok)
	req.Header.Set("Content-Type", "application/json")
	resp, err := http.DefaultClient.Do(req)
	if err != nil || resp.StatusCode != http.StatusCreated {
		t.Fatalf("create run: %v %v", err, resp)
	}
	resp.Body.Close()
	var n int64
	if err := db.SQL().QueryRow(`SELECT max(id) FROM runs`).Scan(&n); err != nil {
		t.Fatal(err)
	}
	e.runID = n
	return e
}

// watcher makes a watcher on the environment with a fake clock; out
// receives the per-file lines.
func (e *watchEnv) watcher(out *bytes.Buffer, change func(*watchConfig)) *watcher {
	e.t.Helper()
	cfg := &watchConfig{dir: e.dir, server: e.srv.URL, token: e.token, runID: e.runID,
		fields: map[string]string{"instrument_fwhm_nm": "0.05", "gas_temperature_K": "1200"},
		settle: 2 * time.Second, poll: time.Second, maxBackoff: time.Minute, timeout: 30 * time.Second,
		statePath: filepath.Join(e.dir, defaultStateName), runFields: map[string]any{}}
	if change != nil {
		change(cfg)
	}
	if e.last != nil {
		e.last.close()
	}
	w, err := newWatcher(cfg, out, io.Discard)
	if err != nil {
		e.t.Fatal(err)
	}
	w.now = func() time.Time { return e.clock }
	w.rand = func() float64 { return 1 }
	e.last = w
	e.t.Cleanup(w.close)
	return w
}

// step advances the fake clock by d and runs one round.
func (e *watchEnv) step(w *watcher, d time.Duration) {
	e.t.Helper()
	e.clock = e.clock.Add(d)
	if err := w.step(context.Background()); err != nil {
		e.t.Fatal(err)
	}
}

// stored counts the attachments named name on the server.
func (e *watchEnv) stored(name string) int {
	e.t.Helper()
	var n int
	if err := e.db.SQL().QueryRow(`SELECT count(*) FROM attachments WHERE name = ?`, name).Scan(&n); err != nil {
		e.t.Fatal(err)
	}
	return n
}

func spectrumData(t *testing.T) []byte {
	t.Helper()
	b, err := os.ReadFile("testdata/spectra/scipy_hbeta_window_snr100.csv")
	if err != nil {
		t.Fatal(err)
	}
	return b
}

func appendFile(t *testing.T, path string, b []byte) {
	t.Helper()
	f, err := os.OpenFile(path, os.O_CREATE|os.O_WRONLY|os.O_APPEND, 0o644)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := f.Write(b); err != nil {
		t.Fatal(err)
	}
	if err := f.Close(); err != nil {
		t.Fatal(err)
	}
}

// TestWatchSettlesBeforeSending: a file written in chunks is sent once,
// whole, only after it stopped changing for the settle interval; temp
// names and dotfiles are never sent.
func TestWatchSettlesBeforeSending(t *testing.T) {
	e := newWatchEnv(t)
	data := spectrumData(t)
	var out bytes.Buffer
	w := e.watcher(&out, func(c *watchConfig) { c.statePath = filepath.Join(e.dir, "sent.json") }) // a state file among the spectra
	path := filepath.Join(e.dir, "s001.csv")
	appendFile(t, filepath.Join(e.dir, "s002.csv.part"), data)
	appendFile(t, filepath.Join(e.dir, "s003.tmp"), data)
	appendFile(t, filepath.Join(e.dir, ".s004.csv"), data)

	third := len(data) / 3
	appendFile(t, path, data[:third])
	e.step(w, 0)
	e.step(w, 1500*time.Millisecond)
	appendFile(t, path, data[third:2*third]) // still being written
	e.step(w, 1500*time.Millisecond)
	e.step(w, 1500*time.Millisecond)
	appendFile(t, path, data[2*third:])
	e.step(w, 100*time.Millisecond)
	e.step(w, 1900*time.Millisecond)
	if a, _, _ := e.gate.counts(); a != 0 {
		t.Fatalf("%d uploads before the file settled", a)
	}
	e.step(w, 200*time.Millisecond) // unchanged for 2.1 s
	if a, _, _ := e.gate.counts(); a != 1 {
		t.Fatalf("%d uploads after the file settled, want 1", a)
	}
	for range 3 {
		e.step(w, 5*time.Second)
	}
	if a, _, _ := e.gate.counts(); a != 1 || e.stored("s001.csv") != 1 {
		t.Errorf("%d uploads, %d stored, want 1 and 1", a, e.stored("s001.csv"))
	}
	e.gate.mu.Lock()
	if e.gate.withPlots != 0 {
		t.Errorf("%d uploads asked for the plot series the watcher does not keep (want plots=none)", e.gate.withPlots)
	}
	e.gate.mu.Unlock()
	var aid int64
	e.db.SQL().QueryRow(`SELECT id FROM attachments WHERE name = 's001.csv'`).Scan(&aid)
	if full, err := e.db.AttachmentContent(context.Background(), aid); err != nil || !bytes.Equal(full.Content, data) {
		t.Errorf("stored %d bytes, not the whole file of %d: %v", len(full.Content), len(data), err)
	}
	line := out.String()
	if strings.Count(line, "\n") != 1 || !strings.Contains(line, "s001.csv sent: run "+strconv.FormatInt(e.runID, 10)+", version 1") || !strings.Contains(line, "n_e ") {
		t.Errorf("log %q", line)
	}
}

// TestWatchRestart: a restarted watcher sends nothing already sent, and a
// file whose answer was lost is found on the server, not sent again.
func TestWatchRestart(t *testing.T) {
	e := newWatchEnv(t)
	data := spectrumData(t)
	var out bytes.Buffer
	w := e.watcher(&out, nil)
	appendFile(t, filepath.Join(e.dir, "a.csv"), data)
	e.step(w, 0)
	e.step(w, 3*time.Second)
	if e.stored("a.csv") != 1 {
		t.Fatal("a.csv not sent")
	}

	// Restart: nothing is sent again, even when a sent file changes.
	w = e.watcher(&out, nil)
	appendFile(t, filepath.Join(e.dir, "a.csv"), []byte("\n"))
	for range 3 {
		e.step(w, 3*time.Second)
	}
	if a, _, _ := e.gate.counts(); a != 1 {
		t.Fatalf("after a restart: %d uploads, want still 1", a)
	}

	// b.csv is stored but its answer is lost; the watcher then stops.
	appendFile(t, filepath.Join(e.dir, "b.csv"), data)
	e.gate.loseNext = 1
	e.step(w, 3*time.Second)
	e.step(w, 3*time.Second)
	if e.stored("b.csv") != 1 {
		t.Fatal("b.csv not stored")
	}
	w = e.watcher(&out, nil)
	for range 3 {
		e.step(w, 2*time.Minute)
	}
	if _, posts, _ := e.gate.counts(); posts != 2 || e.stored("b.csv") != 1 {
		t.Errorf("after a lost answer and a restart: %d uploads carried out, b.csv stored %d times; want 2 and 1", posts, e.stored("b.csv"))
	}
	if !strings.Contains(out.String(), "b.csv sent: run "+strconv.FormatInt(e.runID, 10)) {
		t.Errorf("log %q", out.String())
	}
	st, err := loadState(filepath.Join(e.dir, defaultStateName))
	if err != nil || st.Files["b.csv"].Status != statusSent || st.Files["b.csv"].AttachmentID == 0 || st.Files["b.csv"].SHA256 != sha256Hex(data) {
		t.Errorf("state of b.csv: %+v %v", st.Files["b.csv"], err)
	}
}

// TestWatchServerDown: while the server is down (503, then connection
// refused) the file is retried with growing waits; once the server is up
// it is sent exactly once.
func TestWatchServerDown(t *testing.T) {
	e := newWatchEnv(t)
	var out bytes.Buffer
	w := e.watcher(&out, nil)
	appendFile(t, filepath.Join(e.dir, "c.csv"), spectrumData(t))
	e.gate.down = true
	e.step(w, 0)
	e.step(w, 3*time.Second)
	if a, _, _ := e.gate.counts(); a != 1 {
		t.Fatalf("%d attempts, want 1", a)
	}
	e.step(w, 500*time.Millisecond) // within the back-off: no request
	if a, _, _ := e.gate.counts(); a != 1 {
		t.Fatalf("%d attempts during the back-off, want 1", a)
	}
	first := w.backoffUntil.Sub(e.clock)
	e.step(w, first) // the retry reconciles first (GET, refused by the gate), then waits longer
	if second := w.backoffUntil.Sub(e.clock); second <= first {
		t.Errorf("back-off %v then %v: not growing", first, second)
	}

	// Connection refused.
	dead := httptest.NewServer(http.NotFoundHandler())
	dead.Close()
	w.cfg.server = dead.URL
	e.step(w, 2*time.Minute)
	w.cfg.server = e.srv.URL
	if out.Len() != 0 {
		t.Fatalf("logged as final while the server was down: %q", out.String())
	}

	e.gate.down = false
	e.step(w, 2*time.Minute)
	for range 3 {
		e.step(w, 2*time.Minute)
	}
	if _, posts, _ := e.gate.counts(); posts != 1 || e.stored("c.csv") != 1 {
		t.Errorf("%d uploads carried out, stored %d times; want 1 and 1", posts, e.stored("c.csv"))
	}
	if !strings.Contains(out.String(), "c.csv sent") {
		t.Errorf("log %q", out.String())
	}
}

// TestWatchRefusedFile: a file the server refuses (4xx) is marked failed,
// logged once and not sent again, also after a restart.
func TestWatchRefusedFile(t *testing.T) {
	e := newWatchEnv(t)
	var out bytes.Buffer
	w := e.watcher(&out, nil)
	appendFile(t, filepath.Join(e.dir, "junk.csv"), []byte("wavelength_nm,counts\nabc,def\n"))
	e.step(w, 0)
	for range 4 {
		e.step(w, 2*time.Minute)
	}
	w = e.watcher(&out, nil)
	for range 2 {
		e.step(w, 2*time.Minute)
	}
	if a, _, _ := e.gate.counts(); a != 1 {
		t.Errorf("%d attempts for a refused file, want 1", a)
	}
	if !strings.Contains(out.String(), "junk.csv failed: server answered 4") || strings.Count(out.String(), "\n") != 1 {
		t.Errorf("log %q", out.String())
	}
}

// TestWatchNewRunPerFile: each file gets its own run, tagged with the
// file's key; a run created by an attempt whose answer was lost is found
// again, not created twice.
func TestWatchNewRunPerFile(t *testing.T) {
	e := newWatchEnv(t)
	var out bytes.Buffer
	mode := func(c *watchConfig) {
		c.runID, c.newRunPerFile = 0, true
		c.runFields = map[string]any{"source_type": "plasma_jet", "chamber": "Jet bench J2", "pressure_Pa": 101325.0}
	}
	w := e.watcher(&out, mode)
	data := spectrumData(t)
	appendFile(t, filepath.Join(e.dir, "d1.csv"), data)
	appendFile(t, filepath.Join(e.dir, "d2.csv"), data)
	e.gate.loseNext = 1 // the answer to the first POST /runs
	e.step(w, 0)
	e.step(w, 3*time.Second)
	w = e.watcher(&out, mode) // restart
	for range 3 {
		e.step(w, 2*time.Minute)
	}
	var runs, tagged int
	e.db.SQL().QueryRow(`SELECT count(*) FROM runs`).Scan(&runs)
	e.db.SQL().QueryRow(`SELECT count(DISTINCT run_id) FROM run_tags WHERE tag LIKE 'watch-%'`).Scan(&tagged)
	if _, _, rp := e.gate.counts(); runs != 3 || tagged != 2 || rp != 3 {
		t.Errorf("%d runs (%d tagged), %d created; want 3 (the fixture's and one per file), 2, 3", runs, tagged, rp)
	}
	if e.stored("d1.csv") != 1 || e.stored("d2.csv") != 1 {
		t.Errorf("stored d1 %d, d2 %d times", e.stored("d1.csv"), e.stored("d2.csv"))
	}
	var title string
	e.db.SQL().QueryRow(`SELECT r.title FROM runs r JOIN attachments a ON a.run_id = r.id WHERE a.name = 'd2.csv'`).Scan(&title)
	if title != "Jet bench J2 d2.csv" {
		t.Errorf("title %q", title)
	}
}

// TestWatchLoopStops: the real loop sends a file and returns when its
// context ends (as on SIGINT).
func TestWatchLoopStops(t *testing.T) {
	e := newWatchEnv(t)
	var out bytes.Buffer
	w := e.watcher(&out, func(c *watchConfig) { c.settle, c.poll = 0, 5*time.Millisecond })
	w.now = time.Now
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan error, 1)
	go func() { done <- w.loop(ctx) }()
	appendFile(t, filepath.Join(e.dir, "e.csv.part"), spectrumData(t))
	if err := os.Rename(filepath.Join(e.dir, "e.csv.part"), filepath.Join(e.dir, "e.csv")); err != nil {
		t.Fatal(err)
	}
	for i := 0; i < 1000 && e.stored("e.csv") == 0; i++ {
		time.Sleep(10 * time.Millisecond)
	}
	cancel()
	if err := <-done; err != nil {
		t.Fatal(err)
	}
	if e.stored("e.csv") != 1 {
		t.Errorf("e.csv stored %d times", e.stored("e.csv"))
	}
}

// TestWatchFlags: flags anywhere, and clear errors for missing ones.
func TestWatchFlags(t *testing.T) {
	dir := t.TempDir()
	cfg, code := parseWatchFlags([]string{dir, "--server", "http://x:8080/", "--token", "t", "--run", "3", "--set", "instrument_fwhm_nm=0.05", "--calibrated", "energy"}, io.Discard)
	if cfg == nil || cfg.runID != 3 || cfg.server != "http://x:8080" || cfg.fields["instrument_fwhm_nm"] != "0.05" ||
		cfg.fields["response_corrected_unit"] != "energy" || cfg.statePath != filepath.Join(dir, defaultStateName) {
		t.Fatalf("%+v %d", cfg, code)
	}
	for _, c := range []struct {
		args []string
		msg  string
	}{
		{[]string{dir, "--server", "http://x", "--token", "t"}, "--run ID"},
		{[]string{dir, "--server", "http://x", "--token", "t", "--run", "3", "--new-run-per-file"}, "not both"},
		{[]string{dir, "--server", "http://x", "--token", "t", "--new-run-per-file"}, "--source-type"},
		{[]string{dir, "--server", "http://x", "--token", "t", "--run", "3", "--chamber", "C"}, "need --new-run-per-file"},
		{[]string{dir, "--server", "x:8080", "--token", "t", "--run", "3"}, "http://"},
		{[]string{dir, "--server", "http://x", "--token", "t", "--run", "3", "--set", "instrument_fwhm=0.05"}, "unknown setting"},
		{[]string{filepath.Join(dir, "nope"), "--server", "http://x", "--token", "t", "--run", "3"}, "not a folder"},
	} {
		var errb bytes.Buffer
		if cfg, code := parseWatchFlags(c.args, &errb); cfg != nil || code != exitInput || !strings.Contains(errb.String(), c.msg) {
			t.Errorf("%q: exit %d, %q; want 2 and %q", c.args, code, errb.String(), c.msg)
		}
	}
}

// TestHelp: glowlog --help, -h and help list the commands.
func TestHelp(t *testing.T) {
	for _, a := range []string{"--help", "-h", "help"} {
		var out bytes.Buffer
		if code := run([]string{a}, nil, &out, io.Discard); code != exitOK || !strings.Contains(out.String(), "watch DIR") || !strings.Contains(out.String(), "analyze") {
			t.Errorf("%s: exit %d, %q", a, code, out.String())
		}
	}
}

// TestWatchOneWatcherPerState: a second watcher on the same state file is
// refused while the first runs, and may start once it stopped.
func TestWatchOneWatcherPerState(t *testing.T) {
	e := newWatchEnv(t)
	var out bytes.Buffer
	w := e.watcher(&out, nil)
	if _, err := newWatcher(w.cfg, &out, io.Discard); err == nil || !strings.Contains(err.Error(), "another glowlog watch") {
		t.Fatalf("second watcher: %v", err)
	}
	w.close()
	w2, err := newWatcher(w.cfg, &out, io.Discard)
	if err != nil {
		t.Fatalf("after the first stopped: %v", err)
	}
	w2.close()
}
