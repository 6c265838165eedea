package store

import (
	"context"
	"database/sql"
	"fmt"
	"glowlog/store/procio"
	"syscall"
	"testing"
	"time"
)

// BenchmarkBulkVersions: the store's part of a bulk reanalysis, without
// the analysis: versions of 20 results (~33 kB of JSON and ~17 kB of
// series each, the whole route's sizes) for 50 runs in turn, written
// with=alone (each waited for before the next is queued: a group of one,
// what a job whose runs take longer to analyse than to store got before
// bulk writes waited for one another) and with=bulk (BulkGroupTx, queued
// without waiting: groups of bulkGroup). Reported per version (run):
// cpu-ms (the process's, background checkpoints included), written-kB and
// write-calls (/proc/self/io), versions/commit, and the time the
// committer held the write lock per commit (what an interactive write
// queued just before a commit waits for at most, plus one write) and per
// version.
//
//	go test ./store/ -run '^$' -bench BulkVersions -benchtime 400x
func BenchmarkBulkVersions(b *testing.B) {
	for _, with := range []string{"alone", "bulk"} {
		b.Run("with="+with, func(b *testing.B) {
			ctx := context.Background()
			d, err := Open(ctx, b.TempDir()+"/bulk.db")
			if err != nil {
				b.Fatal(err)
			}
			defer d.Close()
			u, err := d.CreateUser(ctx, "ada.quill", RoleReviewer, "x")
			if err != nil {
				b.Fatal(err)
			}
			const runs, files = 50, 20
			result := `{"n_e":1e21,` + fmt.Sprintf(`"pad":"%0*d"}`, 33000, 0)
			series := make([]byte, 17000)
			for i := range series {
				series[i] = byte(i * 7)
			}
			ids := make([]int64, runs)
			rs := make([][]AnalysisResult, runs)
			t0 := time.Date(2026, 4, 2, 10, 0, 0, 0, time.UTC)
			for r := range runs {
				if ids[r], err = d.CreateRun(ctx, u.ID, RunInput{Title: fmt.Sprint("r", r), StartedAt: t0.Add(time.Duration(r) * time.Hour), SourceType: "dc_glow"}); err != nil {
					b.Fatal(err)
				}
				for range files {
					rs[r] = append(rs[r], AnalysisResult{AttachmentID: mustAttachB(b, d, ids[r]), Result: result, Series: series,
						TexcK: f64(7000), TexcUncK: f64(100), NeM3: f64(3e21), NeUncM3: f64(1e20), NWarnings: 1, WarnWorst: "caution"})
				}
			}
			write := func(i int) func(tx *sql.Tx) error {
				return func(tx *sql.Tx) error {
					_, err := d.AddAnalysisTx(ctx, tx, ids[i%runs], NewAnalysis{Settings: "{}", EngineVersion: "t", CreatedBy: &u.ID, Reason: "bench", Results: rs[i%runs]})
					return err
				}
			}
			w0, c0, busy0 := d.GroupStats()
			wb0, wc0 := procio.Writes()
			cpu0 := benchCPU()
			b.ResetTimer()
			if with == "alone" {
				for i := range b.N {
					if err := d.InGroupTx(ctx, write(i)); err != nil {
						b.Fatal(err)
					}
				}
			} else {
				answers := make([]<-chan error, b.N)
				for i := range b.N {
					answers[i] = d.BulkGroupTx(ctx, write(i))
				}
				for _, ch := range answers {
					if err := <-ch; err != nil {
						b.Fatal(err)
					}
				}
			}
			b.StopTimer()
			cpu := benchCPU() - cpu0
			wb1, wc1 := procio.Writes()
			w1, c1, busy1 := d.GroupStats()
			n := float64(b.N)
			b.ReportMetric(cpu.Seconds()*1000/n, "cpu-ms/version")
			b.ReportMetric(float64(wb1-wb0)/1024/n, "written-kB/version")
			b.ReportMetric(float64(wc1-wc0)/n, "write-calls/version")
			if c1 > c0 {
				b.ReportMetric(float64(w1-w0)/float64(c1-c0), "versions/commit")
				b.ReportMetric((busy1-busy0).Seconds()*1000/float64(c1-c0), "lock-ms/commit")
				b.ReportMetric((busy1-busy0).Seconds()*1000/n, "lock-ms/version")
			}
		})
	}
}

func benchCPU() time.Duration {
	var ru syscall.Rusage
	syscall.Getrusage(syscall.RUSAGE_SELF, &ru)
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}
