package main

import (
	"context"
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io"
	"math/rand/v2"
	"net/http"
	"os"
	"os/signal"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"syscall"
	"time"

	"glowlog/diag"
)

// watchConfig holds the flags of "glowlog watch".
type watchConfig struct {
	dir, server, token string
	runID              int64
	newRunPerFile      bool
	runFields          map[string]any    // body fields of POST /api/v1/runs (new run per file)
	fields             map[string]string // multipart settings fields of every upload
	statePath          string
	settle, poll       time.Duration
	maxBackoff         time.Duration
	timeout            time.Duration
}

const watchUsage = `usage: glowlog watch DIR --server URL --token TOKEN (--run ID | --new-run-per-file --source-type KIND [--chamber NAME] [--recipe NAME]) [flags]

Follows DIR, where a spectrometer writes its files, and uploads each new
file once to a glowlog server through the JSON API, as soon as it has
settled (size and modification time unchanged for --settle). The server
analyses it; one line per file is logged on standard output. What was sent
is recorded in a state file (default DIR/.glowlog-watch.json), so a
restarted watcher sends nothing twice. Stops on Ctrl-C or SIGTERM.

Ignored: subfolders, dotfiles, *.tmp, *.part, *.partial and names ending in ~.
flags:
`

// runWatch runs "glowlog watch" until SIGINT or SIGTERM.
func runWatch(args []string, stdout, stderr io.Writer) int {
	cfg, code := parseWatchFlags(args, stderr)
	if cfg == nil {
		return code
	}
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	defer stop()
	w, err := newWatcher(cfg, stdout, stderr)
	if err != nil {
		fmt.Fprintf(stderr, "glowlog watch: %v\n", err)
		return exitInput
	}
	defer w.close()
	fmt.Fprintf(stderr, "glowlog watch: following %s, sending to %s (state in %s); Ctrl-C stops\n", cfg.dir, cfg.server, cfg.statePath)
	if err := w.loop(ctx); err != nil {
		fmt.Fprintf(stderr, "glowlog watch: %v\n", err)
		var fe *fatalError
		if errors.As(err, &fe) && fe.input {
			return exitInput
		}
		return exitError
	}
	fmt.Fprintln(stderr, "glowlog watch: stopped")
	return exitOK
}

// parseWatchFlags returns the configuration, or nil and the exit status.
func parseWatchFlags(args []string, stderr io.Writer) (*watchConfig, int) {
	cfg := &watchConfig{runFields: map[string]any{}, fields: map[string]string{}}
	fs := flag.NewFlagSet("watch", flag.ContinueOnError)
	fs.SetOutput(stderr)
	fs.Usage = func() {
		fmt.Fprint(stderr, watchUsage)
		fs.PrintDefaults()
	}
	fs.StringVar(&cfg.server, "server", os.Getenv("GLOWLOG_SERVER"), "base URL of the glowlog server, e.g. http://lab-pc:8080 (env GLOWLOG_SERVER)")
	fs.StringVar(&cfg.token, "token", "", "API token of an operator (env GLOWLOG_TOKEN, which keeps it out of the process list)")
	fs.Int64Var(&cfg.runID, "run", 0, "add every file to this run")
	fs.BoolVar(&cfg.newRunPerFile, "new-run-per-file", false, "create a run for each file (started at the file's modification time)")
	sourceType := fs.String("source-type", "", "new runs: plasma source kind (dc_glow, rf_capacitive, rf_inductive, microwave, dielectric_barrier, plasma_jet)")
	chamber := fs.String("chamber", "", "new runs: chamber name (created on the server when new)")
	recipe := fs.String("recipe", "", "new runs: recipe name (created on the server when new)")
	title := fs.String("title", "", "new runs: title before the file name (default: the chamber's name)")
	fs.Func("run-field", "new runs: another field of POST /api/v1/runs as NAME=VALUE (VALUE read as JSON when it is, else as text); repeatable",
		func(v string) error {
			k, val, ok := strings.Cut(v, "=")
			if !ok || strings.TrimSpace(k) == "" {
				return fmt.Errorf("want NAME=VALUE")
			}
			var j any
			if json.Unmarshal([]byte(val), &j) == nil {
				cfg.runFields[strings.TrimSpace(k)] = j
			} else {
				cfg.runFields[strings.TrimSpace(k)] = val
			}
			return nil
		})
	fs.Func("set", "analysis setting sent with every spectrum as NAME=VALUE (the multipart settings fields of the API, e.g. instrument_fwhm_nm=0.05); repeatable",
		func(v string) error {
			k, val, ok := strings.Cut(v, "=")
			if !ok || strings.TrimSpace(k) == "" {
				return fmt.Errorf("want NAME=VALUE")
			}
			k = strings.TrimSpace(k)
			if !slices.Contains(uploadSettingFields, k) {
				return fmt.Errorf("unknown setting %q (want one of %s)", k, strings.Join(uploadSettingFields, ", "))
			}
			cfg.fields[k] = strings.TrimSpace(val)
			return nil
		})
	calibrated := fs.String("calibrated", "", "the spectra are already response-corrected (calibrated exports), in photon or energy units")
	fs.StringVar(&cfg.statePath, "state", "", "state file recording what was sent (default DIR/.glowlog-watch.json)")
	fs.DurationVar(&cfg.settle, "settle", 2*time.Second, "a file is sent once its size and time have not changed for this long")
	fs.DurationVar(&cfg.poll, "poll", time.Second, "how often DIR is listed")
	fs.DurationVar(&cfg.maxBackoff, "max-backoff", time.Minute, "longest wait between attempts while the server is unreachable")
	fs.DurationVar(&cfg.timeout, "timeout", 2*time.Minute, "time limit of one request")
	if err := ParseInterleaved(fs, args); err != nil {
		if errors.Is(err, flag.ErrHelp) {
			return nil, exitOK
		}
		return nil, exitInput
	}
	bad := func(format string, a ...any) (*watchConfig, int) {
		fmt.Fprintf(stderr, "glowlog watch: "+format+"\n", a...)
		return nil, exitInput
	}
	if fs.NArg() != 1 {
		return bad("give exactly one folder DIR to follow (see glowlog watch -h)")
	}
	cfg.dir = fs.Arg(0)
	if fi, err := os.Stat(cfg.dir); err != nil || !fi.IsDir() {
		return bad("%s is not a folder", cfg.dir)
	}
	if cfg.token == "" {
		cfg.token = os.Getenv("GLOWLOG_TOKEN")
	}
	if cfg.server == "" || cfg.token == "" {
		return bad("--server URL and --token (or GLOWLOG_TOKEN) are required")
	}
	if !strings.HasPrefix(cfg.server, "http://") && !strings.HasPrefix(cfg.server, "https://") {
		return bad("--server %q: give a URL starting with http:// or https://", cfg.server)
	}
	cfg.server = strings.TrimRight(cfg.server, "/")
	switch {
	case cfg.runID != 0 && cfg.newRunPerFile:
		return bad("give either --run ID or --new-run-per-file, not both")
	case cfg.runID < 0:
		return bad("--run must be a run id (a positive number), got %d", cfg.runID)
	case cfg.runID == 0 && !cfg.newRunPerFile:
		return bad("give --run ID (add files to that run) or --new-run-per-file")
	}
	if cfg.newRunPerFile {
		if *sourceType == "" && cfg.runFields["source_type"] == nil {
			return bad("--new-run-per-file needs --source-type (dc_glow, rf_capacitive, rf_inductive, microwave, dielectric_barrier or plasma_jet)")
		}
		for k, v := range map[string]string{"source_type": *sourceType, "chamber": *chamber, "recipe": *recipe} {
			if v != "" {
				cfg.runFields[k] = v
			}
		}
		if *title != "" {
			cfg.runFields["title"] = *title
		}
		for _, k := range []string{"started_at", "tags"} {
			if _, ok := cfg.runFields[k]; ok {
				return bad("--run-field %s is set by the watcher (the file's time; a tag naming the file)", k)
			}
		}
	} else if *sourceType != "" || *chamber != "" || *recipe != "" || *title != "" || len(cfg.runFields) > 0 {
		return bad("--source-type, --chamber, --recipe, --title and --run-field describe new runs: they need --new-run-per-file")
	}
	if *calibrated != "" {
		if _, err := diag.ParseIntensityUnit(*calibrated); err != nil {
			return bad("--calibrated: %v", err)
		}
		cfg.fields["response_corrected_unit"] = *calibrated
	}
	if cfg.settle < 0 || cfg.poll <= 0 || cfg.maxBackoff <= 0 || cfg.timeout <= 0 {
		return bad("--settle must be ≥ 0 and --poll, --max-backoff and --timeout > 0")
	}
	if cfg.statePath == "" {
		cfg.statePath = filepath.Join(cfg.dir, defaultStateName)
	}
	return cfg, exitOK
}

// uploadSettingFields are the multipart settings fields of POST
// /api/v1/runs/:id/measurements (server/api.go applySettingFields).
var uploadSettingFields = []string{"instrument_fwhm_nm", "instrument_lorentz_fwhm_nm", "gas_temperature_K",
	"gas_temperature_unc_K", "pressure_Pa", "perturber", "isotope", "solve_gas_temperature", "correct_offset",
	"min_snr", "max_upper", "saturation_counts", "gain_e_per_count", "read_noise_e", "response_unit",
	"response_corrected_unit"}

// fatalError stops the watcher: a problem no retry can fix (a refused
// token, a missing or signed-off run, run fields the server rejects).
type fatalError struct {
	msg   string
	input bool // exit 2 (bad configuration) rather than 1
}

func (e *fatalError) Error() string { return e.msg }

// watcher follows one folder. Its step method does one round (list,
// settle, send); loop repeats it every poll interval.
type watcher struct {
	cfg    *watchConfig
	out    io.Writer // one line per file
	errw   io.Writer // retries and notices
	client *http.Client
	state  *watchState
	lock   *os.File // held while the watcher runs (nil where not supported)
	now    func() time.Time
	rand   func() float64

	seen         map[string]sighting // files not yet settled
	changedNoted map[string]bool     // done files whose change was reported

	failures     int       // consecutive unreachable-server failures
	backoffUntil time.Time // no request before this
}

// sighting is what a file looked like when it last changed.
type sighting struct {
	size  int64
	mtime time.Time
	since time.Time // first seen with this size and time
}

func newWatcher(cfg *watchConfig, out, errw io.Writer) (*watcher, error) {
	lock, err := lockState(cfg.statePath)
	if err != nil {
		return nil, err
	}
	st, err := loadState(cfg.statePath)
	if err != nil {
		if lock != nil {
			lock.Close()
		}
		return nil, err
	}
	return &watcher{cfg: cfg, out: out, errw: errw, client: &http.Client{Timeout: cfg.timeout}, state: st, lock: lock,
		now: time.Now, rand: rand.Float64, seen: map[string]sighting{}, changedNoted: map[string]bool{}}, nil
}

// close releases the state file's lock.
func (w *watcher) close() {
	if w.lock != nil {
		w.lock.Close()
		w.lock = nil
	}
}

func (w *watcher) loop(ctx context.Context) error {
	t := time.NewTicker(w.cfg.poll)
	defer t.Stop()
	for {
		if err := w.step(ctx); err != nil {
			return err
		}
		select {
		case <-ctx.Done():
			return nil
		case <-t.C:
		}
	}
}

// ignoredName says whether a file in DIR is never sent.
func ignoredName(name string) bool {
	l := strings.ToLower(name)
	return strings.HasPrefix(name, ".") || strings.HasSuffix(name, "~") ||
		strings.HasSuffix(l, ".tmp") || strings.HasSuffix(l, ".part") || strings.HasSuffix(l, ".partial")
}

// step lists the folder, advances the settling of new files and sends the
// settled and pending ones, oldest first. It returns only fatal errors
// (and nil when ctx ends).
func (w *watcher) step(ctx context.Context) error {
	entries, err := os.ReadDir(w.cfg.dir)
	if err != nil {
		fmt.Fprintf(w.errw, "glowlog watch: listing %s: %v\n", w.cfg.dir, err)
		return nil
	}
	stateAbs, _ := filepath.Abs(w.cfg.statePath)
	now := w.now()
	type ready struct {
		name  string
		mtime time.Time
	}
	var todo []ready
	present := map[string]bool{}
	for _, e := range entries {
		name := e.Name()
		if !e.Type().IsRegular() || ignoredName(name) {
			continue
		}
		path := filepath.Join(w.cfg.dir, name)
		if abs, _ := filepath.Abs(path); abs == stateAbs || abs == stateAbs+".lock" {
			continue
		}
		present[name] = true
		if fs := w.state.Files[name]; fs != nil {
			if !fs.done() {
				todo = append(todo, ready{name, fs.ModTime})
			} else if fi, err := e.Info(); err == nil && !w.changedNoted[name] &&
				(fi.Size() != fs.Size || !fi.ModTime().Equal(fs.ModTime)) {
				w.changedNoted[name] = true
				fmt.Fprintf(w.errw, "%s %s changed after it was %s; not sent again (files are sent once, by name)\n",
					now.UTC().Format(time.RFC3339), name, fs.Status)
			}
			continue
		}
		fi, err := e.Info()
		if err != nil {
			continue // removed meanwhile
		}
		s, ok := w.seen[name]
		if !ok || s.size != fi.Size() || !s.mtime.Equal(fi.ModTime()) {
			w.seen[name] = sighting{fi.Size(), fi.ModTime(), now}
			continue
		}
		if now.Sub(s.since) >= w.cfg.settle {
			todo = append(todo, ready{name, fi.ModTime()})
		}
	}
	for name := range w.seen {
		if !present[name] {
			delete(w.seen, name)
		}
	}
	// Pending entries whose file has gone still get reconciled.
	for name, fs := range w.state.Files {
		if !fs.done() && !present[name] {
			todo = append(todo, ready{name, fs.ModTime})
		}
	}
	slices.SortFunc(todo, func(a, b ready) int {
		if c := a.mtime.Compare(b.mtime); c != 0 {
			return c
		}
		return strings.Compare(a.name, b.name)
	})
	for _, r := range todo {
		if ctx.Err() != nil {
			return nil
		}
		if w.now().Before(w.backoffUntil) {
			return nil
		}
		if err := w.process(ctx, r.name); err != nil {
			return err
		}
	}
	return nil
}

// process takes one settled or pending file as far as it can go.
func (w *watcher) process(ctx context.Context, name string) error {
	fs := w.state.Files[name]
	var data []byte
	path := filepath.Join(w.cfg.dir, name)
	if fs == nil {
		// A settled file, seen for the first time: read it and check that
		// it did not change while being read.
		fi, err := os.Stat(path)
		if err != nil {
			delete(w.seen, name)
			return nil
		}
		b, err := os.ReadFile(path)
		if err != nil {
			fmt.Fprintf(w.errw, "glowlog watch: %s: %v\n", name, err)
			return nil
		}
		fi2, err := os.Stat(path)
		if err != nil || fi2.Size() != fi.Size() || !fi2.ModTime().Equal(fi.ModTime()) || int64(len(b)) != fi.Size() {
			delete(w.seen, name) // still being written: settle again
			return nil
		}
		data = b
		fs = newFileState(name, b, fi.ModTime(), w.now())
		if max := int64(maxUploadBytes); fi.Size() > max {
			fs.Status, fs.Error = statusFailed, fmt.Sprintf("file is %d bytes, above the server's %d-byte limit", fi.Size(), max)
			return w.finish(name, fs)
		}
		if w.cfg.newRunPerFile {
			fs.Status = statusCreatingRun
		} else {
			fs.Status, fs.RunID = statusSending, w.cfg.runID
		}
		w.state.Files[name] = fs
		delete(w.seen, name)
		if err := w.state.save(w.cfg.statePath); err != nil {
			return &fatalError{msg: "writing the state file: " + err.Error()}
		}
	} else if b, err := os.ReadFile(path); err == nil && sha256Hex(b) == fs.SHA256 {
		data = b
	}

	if fs.Status == statusCreatingRun {
		id, found, err := w.findOrCreateRun(ctx, name, fs, data != nil)
		if err != nil {
			return w.failed(name, fs, err)
		}
		if !found && data == nil {
			// Not on the server and no longer in DIR as recorded.
			fs.Status, fs.Error = statusFailed, "the file was removed or changed before it was sent"
			return w.finish(name, fs)
		}
		fs.RunID, fs.Status, fs.Attempts = id, statusSending, 0
		if err := w.state.save(w.cfg.statePath); err != nil {
			return &fatalError{msg: "writing the state file: " + err.Error()}
		}
	}
	if fs.Status != statusSending {
		return nil
	}
	if fs.Attempts > 0 {
		// An earlier attempt may have reached the server (its answer was
		// lost, or the watcher stopped): look before sending again.
		ok, err := w.reconcile(ctx, name, fs)
		if err != nil {
			return w.failed(name, fs, err)
		}
		if ok {
			return w.finish(name, fs)
		}
	}
	if data == nil {
		fs.Status, fs.Error = statusFailed, "the file was removed or changed before it was sent"
		return w.finish(name, fs)
	}
	fs.Attempts++
	if err := w.state.save(w.cfg.statePath); err != nil {
		return &fatalError{msg: "writing the state file: " + err.Error()}
	}
	ans, err := w.upload(ctx, fs.RunID, name, data)
	if err != nil {
		return w.failed(name, fs, err)
	}
	fs.apply(ans)
	fs.Status = statusSent
	return w.finish(name, fs)
}

// failed handles an error of a request: retry later (server
// unreachable or 5xx), mark the file failed (other 4xx) or stop.
func (w *watcher) failed(name string, fs *fileState, err error) error {
	var fe *fatalError
	if errors.As(err, &fe) {
		return err
	}
	var he *httpError
	if errors.As(err, &he) && !he.retryable() {
		if he.fatal(w.cfg.newRunPerFile, fs.Status) {
			w.state.save(w.cfg.statePath)
			return &fatalError{msg: fmt.Sprintf("%s: %v", name, he), input: true}
		}
		fs.Status, fs.Error = statusFailed, he.Error()
		return w.finish(name, fs)
	}
	if errors.Is(err, context.Canceled) {
		return nil
	}
	w.failures++
	d := min(w.cfg.maxBackoff, time.Second<<min(w.failures-1, 20))
	d = time.Duration(float64(d) * (0.5 + 0.5*w.rand())) // jitter: ½ to 1 times the step
	w.backoffUntil = w.now().Add(d)
	fmt.Fprintf(w.errw, "%s %s: %v; retrying in %s\n", w.now().UTC().Format(time.RFC3339), name, err, d.Round(100*time.Millisecond))
	return nil
}

// finish records a final state and logs the file's line.
func (w *watcher) finish(name string, fs *fileState) error {
	w.failures, w.backoffUntil = 0, time.Time{}
	fs.UpdatedAt = w.now().UTC()
	if fs.Status == statusFailed {
		fs.Attempts = 0
	}
	err := w.state.save(w.cfg.statePath)
	fmt.Fprintf(w.out, "%s %s %s\n", w.now().UTC().Format(time.RFC3339), name, fs.summary())
	if err != nil {
		return &fatalError{msg: "writing the state file: " + err.Error()}
	}
	return nil
}

// summary is the result part of a file's log line.
func (fs *fileState) summary() string {
	if fs.Status == statusFailed {
		return "failed: " + fs.Error
	}
	s := fmt.Sprintf("sent: run %d, version %d", fs.RunID, fs.Version)
	if fs.Note != "" {
		s += " (" + fs.Note + ")"
	}
	if fs.TexcK != nil {
		s += ", T_exc " + strconv.FormatFloat(*fs.TexcK, 'f', 0, 64)
		if fs.TexcUncK != nil {
			s += " ± " + strconv.FormatFloat(*fs.TexcUncK, 'f', 0, 64)
		}
		s += " K"
	}
	if fs.NeM3 != nil {
		s += ", n_e " + strconv.FormatFloat(*fs.NeM3, 'e', 3, 64)
		if fs.NeUncM3 != nil {
			s += " ± " + strconv.FormatFloat(*fs.NeUncM3, 'e', 1, 64)
		}
		s += " m⁻³"
	}
	if fs.Error != "" {
		s += ", analysis: " + fs.Error
	}
	return s
}
