package store

import (
	"context"
	"database/sql"
	"fmt"
	"reflect"
	"testing"
	"time"
)

// TestAddAnalysisManyResults: a version's result rows go in by
// addResultsRows per statement and the rest one by one; every row holds
// what its AnalysisResult says, in the order given (ascending ids), for
// counts below, at and beyond the multi-row statement's.
func TestAddAnalysisManyResults(t *testing.T) {
	ctx := context.Background()
	d, opID := openTrendDB(t)
	for _, n := range []int{1, addResultsRows - 1, addResultsRows, 2*addResultsRows + 3} {
		run, err := d.CreateRun(ctx, opID, RunInput{Title: fmt.Sprintf("rows %d", n), StartedAt: time.Date(2026, 4, 2, 10, 0, 0, 0, time.UTC), SourceType: "dc_glow"})
		if err != nil {
			t.Fatal(err)
		}
		var in []AnalysisResult
		for i := range n {
			r := AnalysisResult{AttachmentID: mustAttach(t, d, run), NWarnings: i % 3}
			switch i % 4 {
			case 0:
				r.Result, r.Series = fmt.Sprintf(`{"i":%d}`, i), []byte{byte(i), 7}
				r.TexcK, r.TexcUncK, r.NeM3 = f64(5000+float64(i)/3), f64(100.125), f64(1e21*(1+float64(i)/7))
				r.WarnWorst = "caution"
			case 1:
				r.Error = fmt.Sprintf("no line %d", i)
			case 2:
				r.Result, r.TgasK, r.NeUncM3 = `{}`, f64(900+float64(i)), f64(3.5e19)
				r.WarnWorst = "problem"
			case 3:
				r.Result = fmt.Sprintf(`{"j":%d}`, i)
			}
			in = append(in, r)
		}
		if _, err := d.AddAnalysis(ctx, run, NewAnalysis{Settings: "{}", EngineVersion: "t", Results: in}); err != nil {
			t.Fatal(err)
		}
		got := resultRows(t, d, run, 1)
		if len(got) != n {
			t.Fatalf("n=%d: %d rows", n, len(got))
		}
		for i, g := range got {
			want := in[i]
			want.ID = g.ID
			if i > 0 && g.ID <= got[i-1].ID {
				t.Errorf("n=%d: row %d id %d after %d", n, i, g.ID, got[i-1].ID)
			}
			if !reflect.DeepEqual(g, want) {
				t.Errorf("n=%d row %d:\n got %+v\nwant %+v", n, i, g, want)
			}
		}
		// The next version keeps every file: rows that share the first's.
		tx, err := d.Begin(ctx)
		if err != nil {
			t.Fatal(err)
		}
		_, _, keep, err := d.LatestResultsTx(ctx, tx, run)
		tx.Rollback()
		if err != nil {
			t.Fatal(err)
		}
		if _, err := d.AddAnalysis(ctx, run, NewAnalysis{Settings: "{}", EngineVersion: "t", Results: keep}); err != nil {
			t.Fatal(err)
		}
		again := resultRows(t, d, run, 2)
		for i, g := range again {
			want := got[i]
			want.ID, want.SameAs, want.Result, want.Series = g.ID, got[i].ID, "", nil
			if !reflect.DeepEqual(g, want) {
				t.Errorf("n=%d version 2 row %d:\n got %+v\nwant %+v", n, i, g, want)
			}
		}
	}
}

// resultRows reads a version's result rows as stored, by id.
func resultRows(t *testing.T, d *DB, run int64, version int) []AnalysisResult {
	t.Helper()
	rows, err := d.db.Query(`SELECT r.id, r.attachment_id, coalesce(r.result, ''), r.series, coalesce(r.error, ''), r.texc_k, r.texc_unc_k,
		r.ne_m3, r.ne_unc_m3, r.tgas_k, r.n_warnings, r.warn_worst, coalesce(r.same_as, 0)
		FROM analysis_results r JOIN analyses a ON a.id = r.analysis_id WHERE a.run_id = ? AND a.version = ? ORDER BY r.id`, run, version)
	if err != nil {
		t.Fatal(err)
	}
	defer rows.Close()
	var out []AnalysisResult
	for rows.Next() {
		var r AnalysisResult
		var f [5]sql.NullFloat64
		if err := rows.Scan(&r.ID, &r.AttachmentID, &r.Result, &r.Series, &r.Error, &f[0], &f[1], &f[2], &f[3], &f[4], &r.NWarnings, &r.WarnWorst, &r.SameAs); err != nil {
			t.Fatal(err)
		}
		p := []**float64{&r.TexcK, &r.TexcUncK, &r.NeM3, &r.NeUncM3, &r.TgasK}
		for k, v := range f {
			if v.Valid {
				*p[k] = f64(v.Float64)
			}
		}
		out = append(out, r)
	}
	if err := rows.Err(); err != nil {
		t.Fatal(err)
	}
	return out
}
