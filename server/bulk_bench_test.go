package server

import (
	"context"
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"testing"
	"time"

	"glowlog/diag/spectrum"
	"glowlog/store"
	"glowlog/store/procio"
)

// BenchmarkBulkReanalysis measures a bulk reanalysis job over 10 000
// spectra: 500 runs of 20 2048-pixel spectra, each run getting a new
// analysis version. One sub-benchmark per analysis route (benchRoutes):
// route=whole, Stark-shaped spectra whose runs' settings take the default
// route (the whole-spectrum fit); route=lines, the Voigt-shaped bench
// spectrum with settings that declare it Voigt (line by line). Each run
// starts with a version holding only those settings (what the job
// reanalyses from), and the first run's new results are checked to come
// from the route. Reported: spectra per second (wall
// clock) and cpu-ms/spectrum (the process's CPU time per spectrum: two
// idle cores take 2000 / cpu-ms/spectrum spectra per second), cores (CPU
// time over wall time: how many cores the job got), runs/commit
// (versions stored per group-commit transaction) and write-ms/spectrum
// (time per spectrum the committer held the write lock).
//
//	go test ./server/ -run '^$' -bench BulkReanalysis -benchtime 1x
func BenchmarkBulkReanalysis(b *testing.B) {
	for _, rt := range benchRoutes(b) {
		b.Run("route="+rt.name, func(b *testing.B) { benchBulkReanalysis(b, rt) })
	}
}

func benchBulkReanalysis(b *testing.B, rt benchRoute) {
	const runs, perRun = 500, 20
	ctx := context.Background()
	dbPath := filepath.Join(b.TempDir(), "bulk.db")
	db, err := store.Open(ctx, dbPath)
	if err != nil {
		b.Fatal(err)
	}
	defer db.Close()
	s := New(db, Options{})
	u, err := db.CreateUser(ctx, "reviewer", store.RoleReviewer, "x")
	if err != nil {
		b.Fatal(err)
	}
	fwhm, tgas := benchRunFWHM, benchRunTgas
	settings := benchSettingsJSON(rt)
	t0 := time.Date(2026, 11, 1, 8, 0, 0, 0, time.UTC)
	var ids []int64
	for i := range runs {
		id, err := db.CreateRun(ctx, u.ID, store.RunInput{Title: fmt.Sprintf("series %d", i), StartedAt: t0.Add(time.Duration(i) * time.Hour),
			SourceType: "microwave", InstrumentFWHMNM: &fwhm, GasTemperatureK: &tgas})
		if err != nil {
			b.Fatal(err)
		}
		tx, err := db.Begin(ctx)
		if err != nil {
			b.Fatal(err)
		}
		for k := range perRun {
			if _, err := db.AddAttachmentTx(ctx, tx, id, store.KindSpectrum, fmt.Sprintf("s%02d.csv", k), rt.files[k%len(rt.files)]); err != nil {
				b.Fatal(err)
			}
		}
		if _, err := db.AddAnalysisTx(ctx, tx, id, store.NewAnalysis{Settings: settings, Reason: "bench settings"}); err != nil {
			b.Fatal(err)
		}
		if err := tx.Commit(); err != nil {
			b.Fatal(err)
		}
		ids = append(ids, id)
	}
	params := fmt.Sprintf(`{"run_ids": %s, "reason": "bench", "user_id": %d}`, jsonInts(ids), u.ID)
	jr := NewJobRunner(s)
	w0, c0, busy0 := db.GroupStats()
	b.ResetTimer()
	var el, cpu time.Duration
	var wb, wc int64
	for range b.N {
		if _, err := db.CreateJob(ctx, jobKindReanalyze, params, runs, u.ID); err != nil {
			b.Fatal(err)
		}
		job, err := db.ClaimNextJob(ctx)
		if err != nil {
			b.Fatal(err)
		}
		wb0, wc0 := procio.Writes()
		start, cpu0 := time.Now(), cpuTime()
		jr.run(ctx, job)
		el, cpu = el+time.Since(start), cpu+cpuTime()-cpu0
		wb1, wc1 := procio.Writes()
		wb, wc = wb+wb1-wb0, wc+wc1-wc0
		if job, err = db.Job(ctx, job.ID); err != nil || job.Done != runs {
			b.Fatalf("job: %+v %v", job, err)
		}
	}
	b.StopTimer()
	checkBulkModel(b, s, ids[0], rt)
	n := float64(b.N * runs * perRun)
	b.ReportMetric(n/el.Seconds(), "spectra/s")
	b.ReportMetric(cpu.Seconds()*1000/n, "cpu-ms/spectrum")
	b.ReportMetric(cpu.Seconds()/el.Seconds(), "cores")
	if w1, c1, busy1 := db.GroupStats(); c1 > c0 {
		b.ReportMetric(float64(w1-w0)/float64(c1-c0), "runs/commit")
		b.ReportMetric((busy1-busy0).Seconds()*1000/n, "write-ms/spectrum")
	}
	if fi, err := os.Stat(dbPath + "-wal"); err == nil {
		b.ReportMetric(float64(fi.Size())/(1<<20), "WAL-MB")
	}
	reportWrites(b, wb, wc, n)
	reportCheckpoints(b, db, n)
}

func jsonInts(v []int64) string {
	out := "["
	for i, x := range v {
		if i > 0 {
			out += ","
		}
		out += fmt.Sprint(x)
	}
	return out + "]"
}

// checkBulkModel fails b unless every result of run id's newest version
// came from the route rt names.
func checkBulkModel(b *testing.B, s *Server, id int64, rt benchRoute) {
	a, err := s.DB.AnalysisVersion(context.Background(), id, 0)
	if err != nil {
		b.Fatal(err)
	}
	if len(a.Results) == 0 {
		b.Fatalf("route %s: run %d: no results", rt.name, id)
	}
	for _, r := range a.Results {
		var m struct {
			Model string `json:"model"`
		}
		if err := json.Unmarshal([]byte(r.Result), &m); err != nil {
			b.Fatalf("route %s: run %d: %v (%.200s)", rt.name, id, err, r.Error)
		}
		if m.Model == "" {
			m.Model = spectrum.ModelLines
		}
		if m.Model != rt.model {
			b.Fatalf("route %s: run %d: a result of route %q", rt.name, id, m.Model)
		}
	}
}
