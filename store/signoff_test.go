package store

import (
	"context"
	"errors"
	"math"
	"strings"
	"testing"
	"time"
)

// TestSignOffApprovesVersion: sign-off records the version it approved;
// later versions change nothing shown (summary, current version, lists,
// trends) until a reviewer reopens the run with a reason.
func TestSignOffApprovesVersion(t *testing.T) {
	ctx := context.Background()
	d, opID := openTrendDB(t)
	op, _ := d.UserByID(ctx, opID)
	rev, _ := d.CreateUser(ctx, "bea.marsh", RoleReviewer, "x")
	run, err := d.CreateRun(ctx, opID, RunInput{Title: "H₂ glow", StartedAt: time.Date(2026, 4, 2, 10, 0, 0, 0, time.UTC), SourceType: "dc_glow"})
	if err != nil {
		t.Fatal(err)
	}
	att := mustAttach(t, d, run)
	add := func(ne float64) int {
		t.Helper()
		v, err := d.AddAnalysis(ctx, run, NewAnalysis{Settings: "{}", EngineVersion: "t",
			Results: []AnalysisResult{{AttachmentID: att, NeM3: f64(ne), NeUncM3: f64(ne / 10)}}})
		if err != nil {
			t.Fatal(err)
		}
		return v
	}
	add(1e20)
	if _, err := d.Review(ctx, run, op, ActionSubmit, ""); err != nil {
		t.Fatal(err)
	}
	v2 := add(2e20) // submitted runs still take versions: the sign-off approves the newest
	// A sign-off of a version the reviewer did not see is refused.
	if _, err := d.ReviewSeen(ctx, run, rev, ActionSignOff, "", 1); !errors.Is(err, ErrConflict) || !strings.Contains(err.Error(), "version 2") {
		t.Fatalf("sign-off of stale version 1: %v", err)
	}
	ev, err := d.ReviewSeen(ctx, run, rev, ActionSignOff, "fine", v2)
	if err != nil || ev.AnalysisVersion != 2 {
		t.Fatalf("sign-off: %v, event version %d", err, ev.AnalysisVersion)
	}
	r, _ := d.GetRun(ctx, run)
	if r.ApprovedVersion == nil || *r.ApprovedVersion != 2 || r.AnalysisVersion != 2 || !near(*r.NeM3, 2e20) {
		t.Fatalf("after sign-off: approved %v version %d n_e %v", r.ApprovedVersion, r.AnalysisVersion, *r.NeM3)
	}

	// A version added now (bulk reanalysis that included the run) is kept
	// but shown nowhere.
	if v := add(9e20); v != 3 {
		t.Fatalf("version %d, want 3", v)
	}
	r, _ = d.GetRun(ctx, run)
	if r.AnalysisVersion != 2 || !near(*r.NeM3, 2e20) || r.Status != StatusSignedOff {
		t.Errorf("signed-off run changed: version %d n_e %g status %s", r.AnalysisVersion, *r.NeM3, r.Status)
	}
	if cur, _ := d.AnalysisVersion(ctx, run, 0); cur.Version != 2 {
		t.Errorf("current version %d, want the approved 2", cur.Version)
	}
	list, _, _ := d.ListRuns(ctx, RunFilter{})
	if len(list) != 1 || !near(*list[0].NeM3, 2e20) || list[0].AnalysisVersion != 2 {
		t.Errorf("run list shows %+v", list)
	}
	ts, err := d.TrendSeries(ctx, RunFilter{}, "started_at", "ne_m3")
	if err != nil || len(ts.Points) != 1 || !near(ts.Points[0].Y, 2e20) {
		t.Errorf("trend shows %+v, %v", ts.Points, err)
	}
	// Its files are locked.
	tx, _ := d.Begin(ctx)
	if _, err := d.AddAttachmentTx(ctx, tx, run, KindSpectrum, "late.csv", []byte("1,2\n")); !errors.Is(err, ErrConflict) {
		t.Errorf("file added to a signed-off run: %v", err)
	}
	tx.Rollback()

	// Reopen: reviewers only, with a reason.
	if _, err := d.Review(ctx, run, op, ActionReopen, "want to fix"); !errors.Is(err, ErrNotAllowed) {
		t.Errorf("operator reopening: %v", err)
	}
	if _, err := d.Review(ctx, run, rev, ActionReopen, "  "); !errors.Is(err, ErrInvalid) {
		t.Errorf("reopen without a reason: %v", err)
	}
	ev, err = d.Review(ctx, run, rev, ActionReopen, "response file was the wrong lamp")
	if err != nil || ev.From != StatusSignedOff || ev.To != StatusReturned || ev.AnalysisVersion != 2 {
		t.Fatalf("reopen: %v %+v", err, ev)
	}
	r, _ = d.GetRun(ctx, run)
	if r.ApprovedVersion != nil || r.SignedOffAt != nil || r.AnalysisVersion != 3 || !near(*r.NeM3, 9e20) {
		t.Errorf("after reopen: approved %v signed %v version %d n_e %g", r.ApprovedVersion, r.SignedOffAt, r.AnalysisVersion, *r.NeM3)
	}
	ts, _ = d.TrendSeries(ctx, RunFilter{}, "started_at", "ne_m3")
	if len(ts.Points) != 1 || !near(ts.Points[0].Y, 9e20) {
		t.Errorf("trend after reopen shows %+v", ts.Points)
	}
	evs, _ := d.StatusEvents(ctx, run)
	last := evs[len(evs)-1]
	if len(evs) != 3 || last.Note != "response file was the wrong lamp" || last.AnalysisVersion != 2 || last.UserName != "bea.marsh" {
		t.Errorf("history %+v", evs)
	}
	// A reopened run is not signed off: reopening again is a conflict.
	if _, err := d.Review(ctx, run, rev, ActionReopen, "again"); !errors.Is(err, ErrConflict) {
		t.Errorf("reopen of a returned run: %v", err)
	}
}

// near compares summary values (a weighted mean of one value may differ
// from it in the last bit).
func near(a, b float64) bool { return math.Abs(a-b) <= 1e-12*math.Abs(b) }
