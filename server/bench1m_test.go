package server

import (
	"context"
	"fmt"
	"net/http"
	"net/http/httptest"
	"os"
	"path/filepath"
	"runtime"
	"strconv"
	"strings"
	"sync"
	"sync/atomic"
	"testing"
	"time"

	"glowlog/store"
)

// The benchmarks here measure the same pages on a database of 1 000 000
// runs. The database is generated in one transaction by a few INSERT …
// SELECT statements over a recursive counter (no per-run Go round trip,
// no analysis run: the runs carry their summary columns, as the 100 000-
// run benchmark's do), and kept in the system's temporary directory
// (bench1MPath):
//
//	go test ./server/ -run '^$' -bench 'Pages1M' -benchtime 200x

const bench1MRuns = 1_000_000

var (
	bench1MOnce   sync.Once
	bench1MSrv    *Server
	bench1MErr    error
	bench1MCookie *http.Cookie
)

// bench1MGen versions the generator: change it when fillBenchDBBulk
// changes. Schema changes need no new file: store.Open migrates the
// cached one, which also exercises each new migration on a million runs
// (the benchmark log shows how long opening took).
const bench1MGen = "gen2"

// bench1MPath is the cached 1M-run database file.
func bench1MPath() string {
	return filepath.Join(os.TempDir(), "glowlog-bench-1m-"+bench1MGen+".db")
}

func bench1MServer(b *testing.B) (*Server, *http.Cookie) {
	b.Helper()
	bench1MOnce.Do(func() {
		ctx := context.Background()
		path := bench1MPath()
		if _, err := os.Stat(path); err != nil {
			tmp := path + ".part"
			os.Remove(tmp)
			os.Remove(tmp + "-wal")
			os.Remove(tmp + "-shm")
			t := time.Now()
			db, err := store.Open(ctx, tmp)
			if err != nil {
				bench1MErr = err
				return
			}
			if err := fillBenchDBBulk(ctx, db, bench1MRuns); err != nil {
				db.Close()
				bench1MErr = err
				return
			}
			if err := db.Close(); err != nil {
				bench1MErr = err
				return
			}
			if bench1MErr = os.Rename(tmp, path); bench1MErr != nil {
				return
			}
			b.Logf("generated %d runs in %s: %s", bench1MRuns, time.Since(t).Round(time.Millisecond), path)
		}
		t := time.Now()
		db, err := store.Open(ctx, path)
		if err != nil {
			bench1MErr = err
			return
		}
		b.Logf("opened %s in %s", path, time.Since(t).Round(time.Millisecond))
		// As serve does at start-up: the trend column store is loaded
		// (and the default trend read) once, before the pages are timed.
		t = time.Now()
		if _, bench1MErr = db.TrendSeries(ctx, store.RunFilter{}, "started_at", "texc_k"); bench1MErr != nil {
			return
		}
		b.Logf("trend column store loaded in %s", time.Since(t).Round(time.Millisecond))
		bench1MSrv = New(db, Options{})
		bench1MCookie, bench1MErr = benchSession(ctx, db)
	})
	if bench1MErr != nil {
		b.Fatal(bench1MErr)
	}
	return bench1MSrv, bench1MCookie
}

// fillBenchDBBulk inserts n runs like fillBenchDB (two years per 100 000
// runs scaled to n: one run every 63 s; four chambers, six recipes, three
// operators, a quarter of the runs per status, a third with warnings),
// with deterministic pseudo-random values computed in SQL, a tag on every
// tenth run and a note on every seventh.
func fillBenchDBBulk(ctx context.Context, db *store.DB, n int) error {
	ops, chambers, recipes, err := benchPeople(ctx, db)
	if err != nil {
		return err
	}
	tx, err := db.Begin(ctx)
	if err != nil {
		return err
	}
	defer tx.Rollback()
	// The triggers on runs and run_tags (audit trail, change log) are
	// set aside for the bulk load and put back in the same transaction:
	// a fresh file has no cached trend to keep current, and a million
	// audit rows would only slow the load down.
	trig, err := tx.QueryContext(ctx, `SELECT name, sql FROM sqlite_master WHERE type = 'trigger' AND tbl_name IN ('runs', 'run_tags')`)
	if err != nil {
		return err
	}
	var triggers [][2]string
	for trig.Next() {
		var t [2]string
		if err := trig.Scan(&t[0], &t[1]); err != nil {
			trig.Close()
			return err
		}
		triggers = append(triggers, t)
	}
	trig.Close()
	for _, t := range triggers {
		if _, err := tx.ExecContext(ctx, `DROP TRIGGER "`+t[0]+`"`); err != nil {
			return err
		}
	}
	t0 := time.Date(2025, 1, 1, 0, 0, 0, 0, time.UTC).Unix()
	// u(k) is a deterministic pseudo-random number in [0, 1) for run i
	// and stream k (a multiplicative hash of i).
	u := func(k int) string {
		return fmt.Sprintf("(((i + %d) * 2654435761) %% 4294967296) / 4294967296.0", k*1000003)
	}
	q := fmt.Sprintf(`WITH RECURSIVE c(i) AS (SELECT 0 UNION ALL SELECT i + 1 FROM c WHERE i < %d)
		INSERT INTO runs (title, started_at, operator_id, chamber_id, recipe_id, source_type, gas_mixture, pressure_pa,
			power_w, perturber, notes, status, created_at, updated_at, texc_k, texc_unc_k, ne_m3, ne_unc_m3, n_warnings,
			analysis_version)
		SELECT 'Bench run ' || (i + 1), %d + i * 63, CASE i %% 3 WHEN 0 THEN %d WHEN 1 THEN %d ELSE %d END,
			%d + i %% 4, %d + i %% 6,
			CASE i %% 6 WHEN 0 THEN 'dc_glow' WHEN 1 THEN 'rf_capacitive' WHEN 2 THEN 'rf_inductive' WHEN 3 THEN 'microwave'
				WHEN 4 THEN 'dielectric_barrier' ELSE 'plasma_jet' END,
			'Ar 97 %%, H2 3 %%', 100 + %s * 1e5, 50 + %s * 500, 'Ar',
			CASE WHEN i %% 7 = 0 THEN 'electrode ' || CASE i %% 5 WHEN 0 THEN 'cleaned' WHEN 1 THEN 'replaced' ELSE 'conditioned' END ELSE '' END,
			CASE i %% 4 WHEN 0 THEN 'draft' WHEN 1 THEN 'submitted' WHEN 2 THEN 'returned' ELSE 'signed_off' END,
			%d + i * 63, %d + i * 63,
			4000 + 3000 * %s, 0.03 * (4000 + 3000 * %s), 1e21 * (1 + 9 * %s), 0.05e21 * (1 + 9 * %s), i %% 3, 1
		FROM c`, n-1, t0, ops[0], ops[1], ops[2], chambers[0], recipes[0], u(1), u(2), t0, t0, u(3), u(3), u(4), u(4))
	if _, err := tx.ExecContext(ctx, q); err != nil {
		return fmt.Errorf("bulk runs: %w", err)
	}
	if _, err := tx.ExecContext(ctx, `INSERT INTO run_tags (run_id, tag)
		SELECT id, CASE id % 3 WHEN 0 THEN 'baseline' WHEN 1 THEN 'campaign-a' ELSE 'repeat' END FROM runs WHERE id % 10 = 0`); err != nil {
		return fmt.Errorf("bulk tags: %w", err)
	}
	for _, t := range triggers {
		if _, err := tx.ExecContext(ctx, t[1]); err != nil {
			return fmt.Errorf("restore trigger %s: %w", t[0], err)
		}
	}
	return tx.Commit()
}

// BenchmarkRunListPages1M: the run list (first page, filtered, sorted,
// text search, deep page) over 1 000 000 runs.
func BenchmarkRunListPages1M(b *testing.B) {
	s, ck := bench1MServer(b)
	pageTimes(b, s, ck, runList1MURLs)
}

var runList1MURLs = []string{
	"/runs",
	"/runs?chamber=2&sort=-texc",
	"/runs?status=submitted&from=2025-06-01&to=2025-12-31",
	"/runs?q=run+77&sort=title",
	"/runs?q=replaced",
	"/runs?tag=baseline&sort=ne",
	"/runs?page=9000",
	"/runs?chamber=3&status=returned&page=500",
}

// BenchmarkRunListEach1M reports p50/p90 of each run-list URL separately.
func BenchmarkRunListEach1M(b *testing.B) {
	s, ck := bench1MServer(b)
	for _, u := range runList1MURLs {
		b.Run(u, func(b *testing.B) { pageTimes(b, s, ck, []string{u}) })
	}
}

// BenchmarkTrendPages1M: the trend pages with the cache warm.
func BenchmarkTrendPages1M(b *testing.B) {
	s, ck := bench1MServer(b)
	pageTimes(b, s, ck, trendURLs)
}

// BenchmarkTrendPages1MFirstView: the trend pages with the cache emptied
// before every request.
func BenchmarkTrendPages1MFirstView(b *testing.B) {
	s, ck := bench1MServer(b)
	pageTimesWith(b, s, ck, trendURLs, s.DB.DropTrendCache)
}

// BenchmarkTrendEach1MFirstView reports each trend URL's first view.
func BenchmarkTrendEach1MFirstView(b *testing.B) {
	s, ck := bench1MServer(b)
	for _, u := range trendURLs {
		b.Run(u, func(b *testing.B) { pageTimesWith(b, s, ck, []string{u}, s.DB.DropTrendCache) })
	}
}

// BenchmarkTrendPages1MAfterChange: the trend pages with one run's
// analysis summary changed before every request (as while spectra are
// being ingested): the column store catches up from the change log and
// the series is built again.
func BenchmarkTrendPages1MAfterChange(b *testing.B) {
	s, ck := bench1MServer(b)
	i := 0
	pageTimesWith(b, s, ck, trendURLs, func() {
		i++
		if _, err := s.DB.SQL().Exec(`UPDATE runs SET texc_k = texc_k + 1 WHERE id = ?`, 1+(i*7919)%bench1MRuns); err != nil {
			b.Fatal(err)
		}
	})
}

// BenchmarkTrendColumnsLoad1M: loading the trend column store of
// 1 000 000 runs (what serve does in the background at start-up), with
// the heap it keeps.
func BenchmarkTrendColumnsLoad1M(b *testing.B) {
	s, _ := bench1MServer(b)
	ctx := context.Background()
	var ms runtime.MemStats
	for b.Loop() {
		s.DB.DropTrendColumns()
		s.DB.DropTrendCache()
		runtime.GC()
		runtime.ReadMemStats(&ms)
		before := ms.HeapAlloc
		if _, err := s.DB.TrendSeries(ctx, store.RunFilter{ChamberID: 1}, "started_at", "texc_k"); err != nil {
			b.Fatal(err)
		}
		s.DB.DropTrendCache()
		runtime.GC()
		runtime.ReadMemStats(&ms)
		b.ReportMetric(float64(ms.HeapAlloc-before)/(1<<20), "columns-MB")
	}
}

// countingWriter is a ResponseWriter that counts and drops the body (a
// recorder would keep a million rows in memory).
type countingWriter struct {
	h http.Header
	n int64
}

func (w *countingWriter) Header() http.Header         { return w.h }
func (w *countingWriter) WriteHeader(int)             {}
func (w *countingWriter) Write(p []byte) (int, error) { w.n += int64(len(p)); return len(p), nil }

// BenchmarkServeMemory1M: the run list (text searches included), trend
// pages (against conditions, with text searches) and the CSV export of
// all 1 000 000 runs, with serve's soft heap limit; reports the process's
// peak resident memory (VmHWM), the peak Go heap sampled during the
// export, and the export's time and size.
//
// As serve does, the soft heap limit is set before the database is opened
// and the column store loaded (when this benchmark runs alone, as it
// should for this figure: others before it in the process load without
// it).
func BenchmarkServeMemory1M(b *testing.B) {
	SetMemoryLimit()
	s, ck := bench1MServer(b)
	for b.Loop() {
		var urls []string
		for _, l := range [][]string{runList1MURLs, trendURLs, runListText1MURLs, trendText1MURLs, trendCondition1MURLs} {
			urls = append(urls, l...)
		}
		for _, u := range urls {
			req := httptest.NewRequest(http.MethodGet, u, nil)
			req.AddCookie(ck)
			rec := httptest.NewRecorder()
			s.ServeHTTP(rec, req)
			if rec.Code != http.StatusOK {
				b.Fatalf("GET %s: %d", u, rec.Code)
			}
		}
		var peak atomic.Uint64
		done := make(chan struct{})
		go func() {
			var ms runtime.MemStats
			for {
				runtime.ReadMemStats(&ms)
				if ms.HeapAlloc > peak.Load() {
					peak.Store(ms.HeapAlloc)
				}
				select {
				case <-done:
					return
				case <-time.After(50 * time.Millisecond):
				}
			}
		}()
		req := httptest.NewRequest(http.MethodGet, "/runs.csv", nil)
		req.AddCookie(ck)
		w := &countingWriter{h: http.Header{}}
		t := time.Now()
		s.ServeHTTP(w, req)
		el := time.Since(t)
		close(done)
		b.ReportMetric(el.Seconds(), "csv-s")
		b.ReportMetric(float64(w.n)/1e6, "csv-MB")
		b.ReportMetric(float64(peak.Load())/(1<<20), "csv-heap-peak-MB")
	}
	b.ReportMetric(vmHWM(), "VmHWM-MB")
}

// vmHWM reads the peak resident set size of this process from /proc.
func vmHWM() float64 {
	b, err := os.ReadFile("/proc/self/status")
	if err != nil {
		return 0
	}
	for _, line := range strings.Split(string(b), "\n") {
		if strings.HasPrefix(line, "VmHWM:") {
			f := strings.Fields(line)
			kb, _ := strconv.ParseFloat(f[1], 64)
			return kb / 1024
		}
	}
	return 0
}

// runListText1MURLs are run-list searches that SQL can only answer by
// checking every run (a LIKE per run): words that match nothing, one
// run or a few, a word in one run in 35 with deep pages in every sort,
// a gas mixture no run has.
var runListText1MURLs = []string{
	"/runs?q=zebra",
	"/runs?q=run+999999",
	"/runs?q=77777&sort=-texc",
	"/runs?q=replaced&sort=-ne&page=300",
	"/runs?q=replaced&sort=title&page=100",
	"/runs?q=cleaned&sort=status&page=50",
	"/runs?q=conditioned+run+12&sort=started",
	"/runs?gas=xenon",
}

// BenchmarkRunListText1M: the text searches above, mixed.
func BenchmarkRunListText1M(b *testing.B) {
	s, ck := bench1MServer(b)
	pageTimes(b, s, ck, runListText1MURLs)
}

// BenchmarkRunListTextEach1M reports each text search separately.
func BenchmarkRunListTextEach1M(b *testing.B) {
	s, ck := bench1MServer(b)
	for _, u := range runListText1MURLs {
		b.Run(u, func(b *testing.B) { pageTimes(b, s, ck, []string{u}) })
	}
}

// trendText1MURLs are trends with a text search (first views).
var trendText1MURLs = []string{
	"/trends?q=replaced",
	"/trends?q=run+77&chamber=2&y=ne_m3",
	"/trends?q=zebra",
	"/trends?q=cleaned&mode=control&base_n=50",
}

// BenchmarkTrendText1MFirstView: trends with a text search, the series
// cache emptied before every request.
func BenchmarkTrendText1MFirstView(b *testing.B) {
	s, ck := bench1MServer(b)
	pageTimesWith(b, s, ck, trendText1MURLs, s.DB.DropTrendCache)
}

// trendCondition1MURLs plot against run conditions and the gas mixture.
var trendCondition1MURLs = []string{
	"/trends?x=pressure_pa&chamber=3",
	"/trends?x=power_w&chamber=3",
	"/trends?x=gas_temperature_k&chamber=3",
	"/trends?x=instrument_fwhm_nm&y=tgas_k",
	"/trends?x=electrode_gap_mm&gas=h2",
}

// BenchmarkTrendCondition1MFirstView: the first view of trends against
// run conditions (the series cache emptied before every request), the
// conditions taken in turn.
func BenchmarkTrendCondition1MFirstView(b *testing.B) {
	s, ck := bench1MServer(b)
	pageTimesWith(b, s, ck, trendCondition1MURLs, s.DB.DropTrendCache)
}
