package store

import (
	"context"
	"errors"
	"path/filepath"
	"testing"
	"time"
)

// openTrendDB opens a fresh database with one operator and returns it with
// the operator's id.
func openTrendDB(t *testing.T) (*DB, int64) {
	t.Helper()
	d, err := Open(context.Background(), filepath.Join(t.TempDir(), "t.db"))
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { d.Close() })
	u, err := d.CreateUser(context.Background(), "ada.quill", RoleOperator, "x")
	if err != nil {
		t.Fatal(err)
	}
	return d, u.ID
}

func f64(v float64) *float64 { return &v }

// setSummary writes a run's analysis summary directly (as AddAnalysis would).
func setSummary(t *testing.T, d *DB, id int64, texc, texcU float64, nWarn int) {
	t.Helper()
	if _, err := d.db.Exec(`UPDATE runs SET texc_k = ?, texc_unc_k = ?, n_warnings = ? WHERE id = ?`, texc, texcU, nWarn, id); err != nil {
		t.Fatal(err)
	}
}

func TestTrendSeries(t *testing.T) {
	ctx := context.Background()
	d, op := openTrendDB(t)
	chA, _ := d.EnsureChamber(ctx, "Bell jar B-2", "")
	chB, _ := d.EnsureChamber(ctx, "Tube T-7", "")
	t0 := time.Date(2026, 3, 1, 9, 0, 0, 0, time.UTC)
	var ids []int64
	for i := range 6 {
		ch := chA
		if i%2 == 1 {
			ch = chB
		}
		in := RunInput{Title: "run", StartedAt: t0.Add(time.Duration(5-i) * time.Hour), ChamberID: &ch, SourceType: "dc_glow",
			PressurePa: f64(100 + float64(i)), Tags: []string{"baseline"}}
		if i == 5 {
			in.PressurePa, in.Tags = nil, nil
		}
		id, err := d.CreateRun(ctx, op, in)
		if err != nil {
			t.Fatal(err)
		}
		ids = append(ids, id)
		if i != 4 { // run 4 has no analysis
			setSummary(t, d, id, 3000+100*float64(i), 50, i)
		}
	}

	ts, err := d.TrendSeries(ctx, RunFilter{}, "started_at", "texc_k")
	if err != nil {
		t.Fatal(err)
	}
	if len(ts.Points) != 5 || ts.Missing != 1 {
		t.Fatalf("points %d missing %d, want 5 and 1", len(ts.Points), ts.Missing)
	}
	// Ordered by start time: run i started at t0 + (5 − i) h, so the last
	// created comes first.
	if ts.Points[0].RunID != ids[5] || ts.Points[0].Y != 3500 || ts.Points[0].YUnc != 50 || ts.Points[0].X != float64(t0.Unix()) {
		t.Errorf("first point %+v, want run %d at %d with 3500 ± 50", ts.Points[0], ids[5], t0.Unix())
	}
	for i := 1; i < len(ts.Points); i++ {
		if ts.Points[i].X < ts.Points[i-1].X {
			t.Errorf("points not ordered by x at %d", i)
		}
	}

	// Filters: chamber, tag, date range; x = a condition.
	ts, err = d.TrendSeries(ctx, RunFilter{ChamberID: chA}, "pressure_pa", "n_warnings")
	if err != nil {
		t.Fatal(err)
	}
	// Chamber A: runs 0, 2, 4; run 4 has n_warnings 0 (not NULL) so it counts.
	if len(ts.Points) != 3 || ts.Points[0].X != 100 || ts.Points[2].X != 104 || ts.Points[1].Y != 2 || ts.Points[0].YUnc != 0 {
		t.Errorf("chamber A series %+v", ts.Points)
	}
	ts, _ = d.TrendSeries(ctx, RunFilter{Tag: "Baseline", From: t0.Add(time.Hour), To: t0.Add(4 * time.Hour)}, "started_at", "texc_k")
	// Tagged runs 0–4 started at t0+5h … t0+1h; [t0+1h, t0+4h) holds runs 2, 3, 4; run 4 has no T_exc.
	if len(ts.Points) != 2 || ts.Missing != 1 {
		t.Errorf("tag + date range: %d points, %d missing, want 2 and 1", len(ts.Points), ts.Missing)
	}

	for _, c := range [][2]string{{"bogus", "texc_k"}, {"started_at", "title; DROP TABLE runs"}} {
		if _, err := d.TrendSeries(ctx, RunFilter{}, c[0], c[1]); !errors.Is(err, ErrInvalid) {
			t.Errorf("TrendSeries(%q, %q) error = %v, want ErrInvalid", c[0], c[1], err)
		}
	}

	where, args := RunFilter{ChamberID: chB, Status: "draft"}.Where()
	if where != " WHERE r.chamber_id = ? AND r.status = ?" || len(args) != 2 {
		t.Errorf("Where() = %q, %v", where, args)
	}
	got, err := d.RunIDs(ctx, RunFilter{ChamberID: chB})
	if err != nil || len(got) != 3 || got[0] != ids[5] {
		t.Errorf("RunIDs = %v, %v; want 3 ids starting with %d", got, err, ids[5])
	}
	titles, err := d.RunTitles(ctx, []int64{ids[0], 9999})
	if err != nil || len(titles) != 1 || titles[ids[0]] != "run" {
		t.Errorf("RunTitles = %v, %v", titles, err)
	}
}
