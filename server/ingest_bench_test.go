package server

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"io"
	"mime/multipart"
	"net/http"
	"net/http/httptest"
	"os"
	"path/filepath"
	"runtime"
	"sync"
	"sync/atomic"
	"syscall"
	"testing"
	"time"

	"glowlog/store"
	"glowlog/store/procio"
)

// BenchmarkAPIIngest measures sustained ingest through the JSON API over
// loopback HTTP: each request uploads one 2048-pixel spectrum as
// multipart to a run, which stores the file and a new analysis version in
// one transaction. Four clients (two per core) each log runs of a time
// series of seriesLen spectra: a new run (POST /api/v1/runs, included in
// the time) after every seriesLen uploads. Reported: spectra per second.
//
// One sub-benchmark per analysis route (benchRoutes): route=whole uploads
// Stark-shaped spectra with the default settings, which the default route
// fits as a whole (what a real discharge's spectra get); route=lines the
// Voigt-shaped bench spectrum declared Voigt (line_shape voigt), analysed
// line by line. The first answer is checked to come from that route. Then
// one per durability mode of serve --sync: normal (the
// default; the WAL is synced at checkpoints) and full (an fsync at every
// commit); and per request size: files=1 (one spectrum per request) and
// files=20 (a batch: each request carries a run's whole series as 20
// "file" parts, stored in one transaction with one analysis version).
//
// Route whole runs once more with plots=none (…/plots=none): the answers
// without their plot series (a quarter to a third of the bytes), what a
// client that stores the numbers, not the curves, asks for.
//
// Besides spectra/s (wall clock, which on a shared machine depends on its
// load) it reports cpu-ms/spectrum: the process's user+system CPU time
// (server and clients) per spectrum, which says what two idle cores can
// take: 2000 / cpu-ms/spectrum spectra per second; cores is CPU time over
// wall time (how many cores the process got). uploads/commit is how
// many requests the group committer stored per transaction, and
// write-ms/spectrum the time per spectrum it held the write lock (work no
// second core can share: 1000 / write-ms/spectrum bounds spectra/s
// whatever the cores).
//
//	go test ./server/ -run '^$' -bench APIIngest -benchtime 1000x
func BenchmarkAPIIngest(b *testing.B) {
	for _, rt := range benchRoutes(b) {
		for _, mode := range []string{store.SyncNormal, store.SyncFull} {
			for _, files := range []int{1, 20} {
				b.Run(fmt.Sprintf("route=%s/sync=%s/files=%d", rt.name, mode, files), func(b *testing.B) { benchAPIIngest(b, rt, mode, files, "") })
				if rt.name == "whole" {
					b.Run(fmt.Sprintf("route=%s/sync=%s/files=%d/plots=none", rt.name, mode, files), func(b *testing.B) {
						benchAPIIngest(b, rt, mode, files, "?plots=none")
					})
				}
			}
		}
	}
}

// cpuTime is the process's user+system CPU time so far.
func cpuTime() time.Duration {
	var ru syscall.Rusage
	syscall.Getrusage(syscall.RUSAGE_SELF, &ru)
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}

func benchAPIIngest(b *testing.B, rt benchRoute, syncMode string, perRequest int, query string) {
	ctx := context.Background()
	dbPath := filepath.Join(b.TempDir(), "ingest.db")
	db, err := store.Open(ctx, dbPath, store.Options{Sync: syncMode})
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
	client := &http.Client{Transport: &http.Transport{MaxIdleConnsPerHost: 64}}
	// post sends a request and returns the status and the answer; with
	// discard201 a 201 answer is read and dropped (a client that has what
	// it needs from the status: the timed uploads).
	postAs := func(path, ctype string, body []byte, discard201 bool) (int, []byte) {
		req, _ := http.NewRequest(http.MethodPost, srv.URL+path, bytes.NewReader(body))
		req.Header.Set("Authorization", "Bearer "+tok)
		req.Header.Set("Content-Type", ctype)
		resp, err := client.Do(req)
		if err != nil {
			b.Fatal(err)
		}
		defer resp.Body.Close()
		if discard201 && resp.StatusCode == http.StatusCreated {
			io.Copy(io.Discard, resp.Body)
			return resp.StatusCode, nil
		}
		var buf bytes.Buffer
		buf.ReadFrom(resp.Body)
		return resp.StatusCode, buf.Bytes()
	}
	post := func(path, ctype string, body []byte) (int, []byte) { return postAs(path, ctype, body, false) }
	upload := func(path, ctype string, body []byte) (int, []byte) { return postAs(path, ctype, body, true) }
	workers := 2 * runtime.GOMAXPROCS(0)
	const seriesLen = 20
	newRun := func(i int64) int64 {
		body := fmt.Sprintf(`{"title": "ingest %d", "started_at": "2026-11-30T08:00:00Z", "source_type": "microwave",
			"instrument_fwhm_nm": %g, "gas_temperature_K": %g}`, i, benchRunFWHM, benchRunTgas)
		code, out := post("/api/v1/runs", "application/json", []byte(body))
		if code != http.StatusCreated {
			b.Fatalf("create run: %d %s", code, out)
		}
		var r struct{ ID int64 }
		json.Unmarshal(out, &r)
		return r.ID
	}
	// multipartBody carries n files from the k-th of rt.files on, and the
	// route's line shape.
	multipartBody := func(k, n int) ([]byte, string) {
		var mb bytes.Buffer
		mw := multipart.NewWriter(&mb)
		if rt.lineShape != "" {
			mw.WriteField("line_shape", rt.lineShape)
		}
		for j := range n {
			fw, _ := mw.CreateFormFile("file", fmt.Sprintf("spectrum-%02d.csv", j))
			fw.Write(rt.files[(k+j)%len(rt.files)])
		}
		mw.Close()
		return mb.Bytes(), mw.FormDataContentType()
	}
	type body struct {
		data  []byte
		ctype string
	}
	singles := make([]body, len(rt.files))
	for k := range singles {
		singles[k].data, singles[k].ctype = multipartBody(k, 1)
	}
	batch, batchType := multipartBody(0, perRequest)
	// The route is checked outside the timing: one upload to a run of its own.
	if code, out := post(fmt.Sprintf("/api/v1/runs/%d/measurements"+query, newRun(0)), batchType, batch); code != http.StatusCreated {
		b.Fatalf("ingest: %d %.300s", code, out)
	} else {
		checkBenchModel(b, rt, out)
	}

	var next atomic.Int64
	var wg sync.WaitGroup
	w0, c0, busy0 := db.GroupStats()
	b.ResetTimer()
	wb0, wc0 := procio.Writes()
	start, cpu0 := time.Now(), cpuTime()
	for range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			var run int64
			for k := 0; ; k++ {
				if perRequest > 1 {
					i := next.Add(int64(perRequest))
					if i-int64(perRequest) >= int64(b.N) {
						return
					}
					run = newRun(i)
					if code, out := upload(fmt.Sprintf("/api/v1/runs/%d/measurements"+query, run), batchType, batch); code != http.StatusCreated {
						b.Errorf("ingest: %d %.300s", code, out)
						return
					}
					continue
				}
				i := next.Add(1)
				if i > int64(b.N) {
					return
				}
				if k%seriesLen == 0 {
					run = newRun(i)
				}
				one := singles[int(i)%len(singles)]
				if code, out := upload(fmt.Sprintf("/api/v1/runs/%d/measurements"+query, run), one.ctype, one.data); code != http.StatusCreated {
					b.Errorf("ingest: %d %s", code, out)
					return
				}
			}
		}()
	}
	wg.Wait()
	el, cpu := time.Since(start), cpuTime()-cpu0
	b.StopTimer()
	wb1, wc1 := procio.Writes()
	n := float64(next.Load())
	if n > float64(b.N) {
		n = float64((b.N + perRequest - 1) / perRequest * perRequest) // whole batches
	}
	b.ReportMetric(n/el.Seconds(), "spectra/s")
	b.ReportMetric(cpu.Seconds()*1000/n, "cpu-ms/spectrum")
	b.ReportMetric(cpu.Seconds()/el.Seconds(), "cores")
	b.ReportMetric(rssMB(), "RSS-MB")
	if w1, c1, busy1 := db.GroupStats(); c1 > c0 {
		b.ReportMetric(float64(w1-w0)/float64(c1-c0), "uploads/commit")
		b.ReportMetric((busy1-busy0).Seconds()*1000/n, "write-ms/spectrum")
	}
	if fi, err := os.Stat(dbPath + "-wal"); err == nil {
		b.ReportMetric(float64(fi.Size())/(1<<20), "WAL-MB")
	}
	reportWrites(b, wb1-wb0, wc1-wc0, n)
	reportCheckpoints(b, db, n)
}
