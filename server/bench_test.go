package server

import (
	"context"
	"fmt"
	"math/rand/v2"
	"net/http"
	"net/http/httptest"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"

	"glowlog/store"
)

// The benchmarks here measure the web targets on a database of 100 000
// runs (built once and kept in the system's temporary directory):
// run-list and trend page server time (p50 and p90 reported), and the
// resident memory afterwards.
//
//	go test ./server/ -run '^$' -bench 'Pages100k' -benchtime 200x

const benchRuns = 100_000

var (
	benchOnce   sync.Once
	benchDB     *store.DB
	benchSrv    *Server
	benchErr    error
	benchCookie *http.Cookie
)

func benchServer(b *testing.B) (*Server, *http.Cookie) {
	b.Helper()
	benchOnce.Do(func() {
		ctx := context.Background()
		path := filepath.Join(os.TempDir(), "glowlog-bench-100k-v1.db")
		fresh := false
		if _, err := os.Stat(path); err != nil {
			fresh = true
		}
		benchDB, benchErr = store.Open(ctx, path)
		if benchErr != nil {
			return
		}
		if fresh {
			benchErr = fillBenchDB(ctx, benchDB, benchRuns)
			if benchErr != nil {
				return
			}
		}
		benchSrv = New(benchDB, Options{})
		benchCookie, benchErr = benchSession(ctx, benchDB)
	})
	if benchErr != nil {
		b.Fatal(benchErr)
	}
	return benchSrv, benchCookie
}

// benchPeople makes the benchmark databases' three accounts (the first,
// bench-viewer, signs in), four chambers and six recipes.
func benchPeople(ctx context.Context, db *store.DB) (ops, chambers, recipes []int64, err error) {
	hash, err := HashPassword("bench-password-0")
	if err != nil {
		return nil, nil, nil, err
	}
	for _, name := range []string{"bench-viewer", "bench-op-a", "bench-op-b"} {
		u, err := db.CreateUser(ctx, name, store.RoleOperator, hash)
		if err != nil {
			return nil, nil, nil, err
		}
		ops = append(ops, u.ID)
	}
	for i := range 4 {
		id, err := db.EnsureChamber(ctx, fmt.Sprintf("Bench chamber %d", i+1), "")
		if err != nil {
			return nil, nil, nil, err
		}
		chambers = append(chambers, id)
	}
	for i := range 6 {
		id, err := db.EnsureRecipe(ctx, fmt.Sprintf("Bench recipe %d", i+1), "")
		if err != nil {
			return nil, nil, nil, err
		}
		recipes = append(recipes, id)
	}
	return ops, chambers, recipes, nil
}

// benchSession signs bench-viewer in on db and returns its cookie.
func benchSession(ctx context.Context, db *store.DB) (*http.Cookie, error) {
	u, err := db.UserByName(ctx, "bench-viewer")
	if err != nil {
		return nil, err
	}
	tok, h := NewToken()
	if err := db.CreateSession(ctx, h, u.ID, time.Hour); err != nil {
		return nil, err
	}
	return &http.Cookie{Name: sessionCookie, Value: tok}, nil
}

// fillBenchDB inserts n runs with summaries, spread over two years, four
// chambers, six recipes and three operators (direct SQL: speed).
func fillBenchDB(ctx context.Context, db *store.DB, n int) error {
	ops, chambers, recipes, err := benchPeople(ctx, db)
	if err != nil {
		return err
	}
	tx, err := db.Begin(ctx)
	if err != nil {
		return err
	}
	defer tx.Rollback()
	stmt, err := tx.PrepareContext(ctx, `INSERT INTO runs (title, started_at, operator_id, chamber_id, recipe_id, source_type,
		gas_mixture, pressure_pa, power_w, perturber, status, created_at, updated_at, texc_k, texc_unc_k, ne_m3, ne_unc_m3,
		n_warnings, analysis_version) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, 'Ar', ?, ?, ?, ?, ?, ?, ?, ?, 1)`)
	if err != nil {
		return err
	}
	rng := rand.New(rand.NewPCG(42, 1))
	sources := []string{"dc_glow", "rf_capacitive", "rf_inductive", "microwave", "dielectric_barrier", "plasma_jet"}
	statuses := []string{"draft", "submitted", "returned", "signed_off"}
	t0 := time.Date(2025, 1, 1, 0, 0, 0, 0, time.UTC).Unix()
	for i := range n {
		started := t0 + int64(i)*630 // about two years for 100 000 runs
		texc := 4000 + 3000*rng.Float64()
		ne := 1e21 * (1 + 9*rng.Float64())
		if _, err := stmt.ExecContext(ctx, fmt.Sprintf("Bench run %d", i+1), started, ops[i%3], chambers[i%4], recipes[i%6],
			sources[i%6], "Ar 97 %, H2 3 %", 100+rng.Float64()*1e5, 50+rng.Float64()*500, statuses[i%4], started, started,
			texc, 0.03*texc, ne, 0.05*ne, i%3); err != nil {
			return err
		}
	}
	return tx.Commit()
}

// pageTimes requests each URL repeatedly through the handler and reports
// p50 and p90 of the server time.
func pageTimes(b *testing.B, s *Server, ck *http.Cookie, urls []string) {
	pageTimesWith(b, s, ck, urls, nil)
}

// pageTimesWith is pageTimes calling before (untimed) ahead of each request.
func pageTimesWith(b *testing.B, s *Server, ck *http.Cookie, urls []string, before func()) {
	b.Helper()
	var times []time.Duration
	b.ResetTimer()
	for i := 0; b.Loop(); i++ {
		if before != nil {
			before()
		}
		u := urls[i%len(urls)]
		req := httptest.NewRequest(http.MethodGet, u, nil)
		req.AddCookie(ck)
		rec := httptest.NewRecorder()
		t := time.Now()
		s.ServeHTTP(rec, req)
		times = append(times, time.Since(t))
		if rec.Code != http.StatusOK {
			b.Fatalf("GET %s: %d %s", u, rec.Code, strings.TrimSpace(rec.Body.String()[:min(200, rec.Body.Len())]))
		}
	}
	b.StopTimer()
	sort.Slice(times, func(i, j int) bool { return times[i] < times[j] })
	p := func(q float64) float64 { return float64(times[int(q*float64(len(times)-1))].Microseconds()) / 1000 }
	b.ReportMetric(p(0.5), "p50-ms")
	b.ReportMetric(p(0.9), "p90-ms")
	b.ReportMetric(rssMB(), "RSS-MB")
}

// rssMB reads the resident set size of this process from /proc.
func rssMB() float64 {
	b, err := os.ReadFile("/proc/self/status")
	if err != nil {
		return 0
	}
	for _, line := range strings.Split(string(b), "\n") {
		if strings.HasPrefix(line, "VmRSS:") {
			f := strings.Fields(line)
			kb, _ := strconv.ParseFloat(f[1], 64)
			return kb / 1024
		}
	}
	return 0
}

// BenchmarkRunListPages100k: the run list (first page, filtered, sorted,
// deep page) over 100 000 runs.
func BenchmarkRunListPages100k(b *testing.B) {
	s, ck := benchServer(b)
	pageTimes(b, s, ck, []string{
		"/runs",
		"/runs?chamber=2&sort=-texc",
		"/runs?status=submitted&from=2025-06-01&to=2025-12-31",
		"/runs?q=run+77&sort=title",
		"/runs?page=900",
	})
}
