package server

import (
	"context"
	"io"
	"log/slog"
	"path/filepath"
	"testing"
	"time"

	"glowlog/store"
)

// TestSeedDemo seeds a small scenario and checks counts, that every run
// has an analysis, review states, and the electrode-wear drift of n_e in
// Jet line J1 (lower before the maintenance than after it).
func TestSeedDemo(t *testing.T) {
	ctx := context.Background()
	db, err := store.Open(ctx, filepath.Join(t.TempDir(), "demo.db"))
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	s := New(db, Options{Log: slog.New(slog.NewTextHandler(io.Discard, nil))})
	admin, err := db.CreateUser(ctx, "admin", store.RoleAdmin, "x")
	if err != nil {
		t.Fatal(err)
	}
	end := time.Date(2026, 9, 1, 0, 0, 0, 0, time.UTC)
	if err := SeedDemo(ctx, s, admin.ID, DemoOptions{Runs: 40, End: end}); err != nil {
		t.Fatal(err)
	}
	if n, _ := db.CountUsers(ctx); n != 1+len(demoOperators) {
		t.Errorf("%d users, want %d", n, 1+len(demoOperators))
	}
	runs, total, err := db.ListRuns(ctx, store.RunFilter{Limit: 1000})
	if err != nil {
		t.Fatal(err)
	}
	if total != 40 {
		t.Fatalf("%d runs, want 40", total)
	}
	status := map[string]int{}
	warnings := 0
	for _, r := range runs {
		status[r.Status]++
		warnings += r.NWarnings
		if (r.NWarnings > 0) != (r.WarnWorst != "") {
			t.Errorf("run %d: %d warnings but worst severity %q", r.ID, r.NWarnings, r.WarnWorst)
		}
		if r.AnalysisVersion != 1 {
			t.Errorf("run %d: analysis version %d", r.ID, r.AnalysisVersion)
		}
		if r.TexcK == nil {
			t.Errorf("run %d (%s): no excitation temperature", r.ID, r.ChamberName)
		}
		if r.StartedAt.After(end) || r.StartedAt.Before(end.AddDate(0, 0, -demoDays-1)) {
			t.Errorf("run %d starts %v, outside the scenario", r.ID, r.StartedAt)
		}
	}
	// Routine method caveats are notes, not warnings: the demo's runs
	// average fewer than one problem or caution each.
	if avg := float64(warnings) / float64(len(runs)); avg >= 1 {
		t.Errorf("demo runs average %.2f problems and cautions, want < 1", avg)
	}
	if status["signed_off"] == 0 || status["draft"] == 0 {
		t.Errorf("review states %v: want signed-off and draft runs", status)
	}
	chambers, _ := db.Chambers(ctx)
	var j1 int64
	for _, c := range chambers {
		if c.Name == "Jet line J1" {
			j1 = c.ID
		}
	}
	maint := end.AddDate(0, 0, demoMaintenanceDay-demoDays)
	mean := func(from, to time.Time) (float64, int) {
		rs, _, err := db.ListRuns(ctx, store.RunFilter{ChamberID: j1, From: from, To: to, Limit: 1000})
		if err != nil {
			t.Fatal(err)
		}
		var sum float64
		var n int
		for _, r := range rs {
			if r.NeM3 != nil {
				sum += *r.NeM3
				n++
			}
		}
		return sum / float64(n), n
	}
	before, nb := mean(maint.AddDate(0, 0, -60), maint)
	after, na := mean(maint, end)
	if nb == 0 || na == 0 {
		t.Fatalf("J1 runs with n_e: %d before, %d after the maintenance", nb, na)
	}
	// Truth: about 6.3e21 before and 8.1e21 after.
	if !(after > 1.15*before) {
		t.Errorf("J1 mean n_e %.3g before vs %.3g after the maintenance: no step", before, after)
	}
	// The chamber events tell the story: the J1 electrode change on the
	// maintenance day, before the first run of that day.
	evs, err := db.ChamberEvents(ctx, []int64{j1}, maint, maint.AddDate(0, 0, 1), 0)
	if err != nil || len(evs) != 1 || evs[0].Kind != store.EventElectrodeChange || evs[0].At.Hour() >= 8 {
		t.Errorf("J1 events on the maintenance day: %+v (%v)", evs, err)
	}
	if all, _ := db.ChamberEvents(ctx, nil, time.Time{}, time.Time{}, 0); len(all) != len(demoEvents) {
		t.Errorf("%d chamber events, want %d", len(all), len(demoEvents))
	}
	if rs, _, _ := db.ListRuns(ctx, store.RunFilter{Tag: "maintenance"}); len(rs) == 0 {
		t.Log("no run in the first maintenance week in this small scenario")
	}
}
