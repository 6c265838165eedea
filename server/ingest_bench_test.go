package server

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"mime/multipart"
	"net/http"
	"net/http/httptest"
	"os"
	"path/filepath"
	"runtime"
	"sync"
	"sync/atomic"
	"testing"
	"time"

	"glowlog/store"
)

// BenchmarkAPIIngest measures sustained ingest through the JSON API over
// loopback HTTP: each request uploads one 2048-pixel spectrum (Hα–Hζ) as
// multipart to a run, which stores the file and a new analysis version in
// one transaction. Four clients (two per core) each log runs of a time
// series of seriesLen spectra: a new run (POST /api/v1/runs, included in
// the time) after every seriesLen uploads. Reported: spectra per second.
//
// One sub-benchmark per durability mode of serve --sync: normal (the
// default; the WAL is synced at checkpoints) and full (an fsync at every
// commit).
//
//	go test ./server/ -run '^$' -bench APIIngest -benchtime 2000x
func BenchmarkAPIIngest(b *testing.B) {
	for _, mode := range []string{store.SyncNormal, store.SyncFull} {
		b.Run("sync="+mode, func(b *testing.B) { benchAPIIngest(b, mode) })
	}
}

func benchAPIIngest(b *testing.B, syncMode string) {
	ctx := context.Background()
	db, err := store.Open(ctx, filepath.Join(b.TempDir(), "ingest.db"), store.Options{Sync: syncMode})
	if err != nil {
		b.Fatal(err)
	}
	defer db.Close()
	s := New(db, Options{})
	u, err := db.CreateUser(ctx, "ingest-bot", store.RoleOperator, "x")
	if err != nil {
		b.Fatal(err)
	}
	tok, h := NewToken()
	if _, err := db.CreateToken(ctx, u.ID, "bench", h); err != nil {
		b.Fatal(err)
	}
	srv := httptest.NewServer(s)
	defer srv.Close()
	spec, err := os.ReadFile("../testdata/spectra/scipy_bench_2048.csv")
	if err != nil {
		b.Fatal(err)
	}
	client := &http.Client{Transport: &http.Transport{MaxIdleConnsPerHost: 64}}
	post := func(path, ctype string, body []byte) (int, []byte) {
		req, _ := http.NewRequest(http.MethodPost, srv.URL+path, bytes.NewReader(body))
		req.Header.Set("Authorization", "Bearer "+tok)
		req.Header.Set("Content-Type", ctype)
		resp, err := client.Do(req)
		if err != nil {
			b.Fatal(err)
		}
		defer resp.Body.Close()
		var buf bytes.Buffer
		buf.ReadFrom(resp.Body)
		return resp.StatusCode, buf.Bytes()
	}
	workers := 2 * runtime.GOMAXPROCS(0)
	const seriesLen = 20
	newRun := func(i int64) int64 {
		body := fmt.Sprintf(`{"title": "ingest %d", "started_at": "2026-11-30T08:00:00Z", "source_type": "microwave",
			"instrument_fwhm_nm": 0.35, "gas_temperature_K": 1000}`, i)
		code, out := post("/api/v1/runs", "application/json", []byte(body))
		if code != http.StatusCreated {
			b.Fatalf("create run: %d %s", code, out)
		}
		var r struct{ ID int64 }
		json.Unmarshal(out, &r)
		return r.ID
	}
	var mb bytes.Buffer
	mw := multipart.NewWriter(&mb)
	fw, _ := mw.CreateFormFile("file", "spectrum.csv")
	fw.Write(spec)
	mw.Close()
	body, ctype := mb.Bytes(), mw.FormDataContentType()

	var next atomic.Int64
	var wg sync.WaitGroup
	b.ResetTimer()
	start := time.Now()
	for range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			var run int64
			for k := 0; ; k++ {
				i := next.Add(1)
				if i > int64(b.N) {
					return
				}
				if k%seriesLen == 0 {
					run = newRun(i)
				}
				if code, out := post(fmt.Sprintf("/api/v1/runs/%d/measurements", run), ctype, body); code != http.StatusCreated {
					b.Errorf("ingest: %d %s", code, out)
					return
				}
			}
		}()
	}
	wg.Wait()
	el := time.Since(start)
	b.StopTimer()
	b.ReportMetric(float64(b.N)/el.Seconds(), "spectra/s")
	b.ReportMetric(rssMB(), "RSS-MB")
}
