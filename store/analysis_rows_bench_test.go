package store

import (
	"context"
	"database/sql"
	"fmt"
	"testing"
	"time"
)

// BenchmarkAddVersion: one upload's analysis version of a run of files
// files — files−1 kept (rows that share their earlier result) and the
// newest with a result of its own (~60 kB with its series) — read, written
// and committed in a group transaction: the version part of the store's
// work for an API upload of one file.
func BenchmarkAddVersion(b *testing.B) {
	for _, files := range []int{1, 10, 20} {
		b.Run(fmt.Sprintf("files=%d", files), func(b *testing.B) {
			ctx := context.Background()
			d, err := Open(ctx, b.TempDir()+"/v.db")
			if err != nil {
				b.Fatal(err)
			}
			defer d.Close()
			u, err := d.CreateUser(ctx, "ada.quill", RoleOperator, "x")
			if err != nil {
				b.Fatal(err)
			}
			run, err := d.CreateRun(ctx, u.ID, RunInput{Title: "v", StartedAt: time.Date(2026, 4, 2, 10, 0, 0, 0, time.UTC), SourceType: "dc_glow"})
			if err != nil {
				b.Fatal(err)
			}
			result := `{"n_e":1e21,` + fmt.Sprintf(`"pad":"%0*d"}`, 30000, 0)
			series := make([]byte, 30000)
			var rs []AnalysisResult
			for range files {
				rs = append(rs, AnalysisResult{AttachmentID: mustAttachB(b, d, run), Result: result, Series: series,
					TexcK: f64(7000), TexcUncK: f64(100), NeM3: f64(3e21), NeUncM3: f64(1e20), NWarnings: 1, WarnWorst: "caution"})
			}
			if _, err := d.AddAnalysis(ctx, run, NewAnalysis{Settings: "{}", EngineVersion: "t", Results: rs}); err != nil {
				b.Fatal(err)
			}
			b.ResetTimer()
			for range b.N {
				err := d.InGroupTx(ctx, func(tx *sql.Tx) error {
					_, _, keep, err := d.LatestResultsTx(ctx, tx, run)
					if err != nil {
						return err
					}
					keep[len(keep)-1] = rs[len(rs)-1] // the newest file analysed anew
					_, err = d.AddAnalysisTx(ctx, tx, run, NewAnalysis{Settings: "{}", EngineVersion: "t", Results: keep})
					return err
				})
				if err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

func mustAttachB(b *testing.B, d *DB, runID int64) int64 {
	var id int64
	err := d.InGroupTx(context.Background(), func(tx *sql.Tx) error {
		var err error
		id, err = d.AddAttachmentTx(context.Background(), tx, runID, KindSpectrum, "s.csv", []byte("1,2\n"))
		return err
	})
	if err != nil {
		b.Fatal(err)
	}
	return id
}
