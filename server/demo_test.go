package server

import (
	"context"
	"io"
	"log/slog"
	"math"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"testing"
	"time"

	"gonum.org/v1/gonum/stat"

	"glowlog/diag/grating"
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
	// The seeding clock is the store's: no demo time may be later.
	now := time.Date(2026, 9, 1, 10, 30, 0, 0, time.UTC)
	db.Now = func() time.Time { return now }
	admin, err := db.CreateUser(ctx, "admin", store.RoleAdmin, "x")
	if err != nil {
		t.Fatal(err)
	}
	if err := SeedDemo(ctx, s, admin.ID, DemoOptions{Runs: 40}); err != nil {
		t.Fatal(err)
	}
	end := now.Truncate(24 * time.Hour)
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
		// The survey spectrograph sees Hα…H8 (T_exc and n_e); the
		// high-resolution windows one line (n_e only).
		if survey := r.GratingLMM != nil && *r.GratingLMM == 300; survey != (r.TexcK != nil) || r.NeM3 == nil {
			t.Errorf("run %d (%s, %v l/mm): T_exc %v K, n_e %v m⁻³", r.ID, r.ChamberName, deref(r.GratingLMM), deref(r.TexcK), deref(r.NeM3))
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

	checkDemoEvents(t, db, j1, end)
	checkDemoSpectrometers(t, db, runs)
	checkDemoNoFuture(t, db, now)
	checkDemoReviewers(t, db, admin.ID)

	// An End in the future is moved back to the seeding clock.
	db2, err := store.Open(ctx, filepath.Join(t.TempDir(), "demo2.db"))
	if err != nil {
		t.Fatal(err)
	}
	defer db2.Close()
	db2.Now = func() time.Time { return now }
	admin2, _ := db2.CreateUser(ctx, "admin", store.RoleAdmin, "x")
	if err := SeedDemo(ctx, New(db2, Options{Log: slog.New(slog.NewTextHandler(io.Discard, nil))}), admin2.ID, DemoOptions{Runs: 4, End: now.AddDate(0, 1, 0)}); err != nil {
		t.Fatal(err)
	}
	checkDemoNoFuture(t, db2, now)
}

func deref(p *float64) float64 {
	if p == nil {
		return math.NaN()
	}
	return *p
}

// checkDemoEvents: the events are in time order inside the scenario, and
// the J1 story holds in the data: a new pin on day 0 before the first J1
// run, n_e clearly down by the day-96 note (model: 0.74 of the first
// 40 days' mean over days 60–96).
func checkDemoEvents(t *testing.T, db *store.DB, j1 int64, end time.Time) {
	ctx := context.Background()
	start := end.AddDate(0, 0, -demoDays)
	all, err := db.ChamberEvents(ctx, nil, time.Time{}, time.Time{}, 0)
	if err != nil || len(all) != len(demoEvents) {
		t.Fatalf("%d chamber events (%v), want %d", len(all), err, len(demoEvents))
	}
	sort.SliceStable(all, func(i, j int) bool { return all[i].At.Before(all[j].At) })
	for i, e := range all {
		if want := start.AddDate(0, 0, demoEvents[i].day).Add(demoEvents[i].at); !e.At.Equal(want) || e.Kind != demoEvents[i].kind {
			t.Errorf("event %d: %s at %v, want %s at %v (in order)", i, e.Kind, e.At, demoEvents[i].kind, want)
		}
	}
	if first := all[0]; first.ChamberID != j1 || first.Kind != store.EventElectrodeChange {
		t.Errorf("first event %+v, want the J1 electrode change", first)
	}
	j1runs, _, _ := db.ListRuns(ctx, store.RunFilter{ChamberID: j1, Limit: 1000})
	var early, late []float64
	for _, r := range j1runs {
		if r.StartedAt.Before(all[0].At) {
			t.Errorf("J1 run %d at %v before its first pin was fitted", r.ID, r.StartedAt)
		}
		day := r.StartedAt.Sub(start).Hours() / 24
		switch {
		case r.NeM3 == nil:
		case day < 40:
			early = append(early, *r.NeM3)
		case day >= 60 && day < 96:
			late = append(late, *r.NeM3)
		}
	}
	if me, ml := stat.Mean(early, nil), stat.Mean(late, nil); len(early) == 0 || len(late) == 0 || !(ml < 0.85*me) {
		t.Errorf("J1 n_e %.3g (days 0–40, %d runs) vs %.3g (days 60–96, %d runs): the day-96 note finds no drift", me, len(early), ml, len(late))
	}
}

// demoStated are the spectrometers the demo runs' notes state, written
// out here independently of demo.go: grating → name, focal length, pixel
// pitch, pixel count and detector-centre wavelength (Littrow mount).
var demoStated = map[float64]struct {
	name     string
	focalMM  float64
	pixelUM  float64
	pixels   int
	centreNM float64
	lines    int
}{
	300:  {"FH-S1", 570, 13.5, 4096, 540, 7},
	1800: {"FH-H2", 750, 13.5, 2048, 486.13, 1},
	2400: {"FH-H2", 750, 13.5, 2048, 656.28, 1},
}

// checkDemoSpectrometers: every spectrum has the pixel count and
// wavelength range (grating.Spectrometer.Coverage) of the run's stated
// spectrometer with its stored grating, its pixel spacing is the
// dispersion, the stored instrument FWHM is the planner's estimate for the
// stored slit (PracticalNM) and spans ≥ grating.MinFWHMPixels pixels, and
// the window holds the Balmer lines it should.
//
// Tolerances: the CSV writes wavelengths to 1e-4 nm, so edges and
// spacings are compared to 0.05 pixel and 3 % (the 2400 l/mm axis has
// 0.0046 nm pixels); the stored FWHM has three figures (≤ 0.5 %). One
// FWHM serves the whole window: the test also checks it is within 2.5 % of the
// planner's value at every Balmer line on the detector (on the survey
// instrument cos β varies by < 1 % over 380–700 nm; the high-resolution
// windows hold one line, at the centre).
func checkDemoSpectrometers(t *testing.T, db *store.DB, runs []store.Run) {
	ctx := context.Background()
	balmer := []float64{656.28, 486.13, 434.05, 410.17, 397.01, 388.91, 383.54}
	for _, r := range runs {
		g := deref(r.GratingLMM)
		st, ok := demoStated[g]
		if !ok {
			t.Errorf("run %d: grating %v l/mm is no demo spectrometer", r.ID, g)
			continue
		}
		full, err := db.GetRun(ctx, r.ID)
		if err != nil {
			t.Fatal(err)
		}
		if !strings.Contains(full.Notes, st.name) {
			t.Errorf("run %d: notes do not state the spectrometer %s", r.ID, st.name)
		}
		sp := grating.Spectrometer{GroovesPerMM: g, Order: 1, FocalLengthMM: st.focalMM, SlitWidthUM: deref(r.SlitUM),
			PixelSizeUM: st.pixelUM, Pixels: st.pixels, IlluminatedWidthMM: 50}
		alpha, _ := grating.LittrowAngleDeg(st.centreNM, g, 1)
		p, err := sp.At(st.centreNM, alpha)
		if err != nil {
			t.Errorf("run %d: %v", r.ID, err)
			continue
		}
		cov, _ := sp.Coverage(st.centreNM, alpha)
		inst := deref(r.InstrumentFWHMNM)
		if math.Abs(inst-p.PracticalNM) > 0.005*p.PracticalNM || p.FWHMPixels() < grating.MinFWHMPixels {
			t.Errorf("run %d: stored instrument FWHM %v nm, planner %.4f nm (%.2f pixels) for a %v µm slit", r.ID, inst, p.PracticalNM, p.FWHMPixels(), deref(r.SlitUM))
		}
		for _, l := range balmer {
			if !cov.Contains(l) {
				continue
			}
			if pl, err := sp.At(l, alpha); err != nil || math.Abs(pl.PracticalNM-inst) > 0.025*inst {
				t.Errorf("run %d: instrument FWHM at %.2f nm %.4f nm vs stored %v (%v)", r.ID, l, pl.PracticalNM, inst, err)
			}
		}
		atts, _ := db.Attachments(ctx, r.ID)
		nspec := 0
		for _, a := range atts {
			if a.Kind != store.KindSpectrum {
				continue
			}
			nspec++
			c, err := db.AttachmentContent(ctx, a.ID)
			if err != nil {
				t.Fatal(err)
			}
			x := demoWavelengths(t, c.Content)
			n := len(x)
			if n != st.pixels {
				t.Errorf("run %d %s: %d pixels, want %d", r.ID, a.Name, n, st.pixels)
				continue
			}
			px := p.DispersionNMPerPixel
			if math.Abs(x[0]-px/2-cov.LowNM) > 0.05*px || math.Abs(x[n-1]+px/2-cov.HighNM) > 0.05*px {
				t.Errorf("run %d %s: %.4f–%.4f nm, coverage %.4f–%.4f nm", r.ID, a.Name, x[0], x[n-1], cov.LowNM, cov.HighNM)
			}
			if d := x[n/2] - x[n/2-1]; math.Abs(d-px) > 0.03*px {
				t.Errorf("run %d %s: centre spacing %.5f nm, dispersion %.5f nm/pixel", r.ID, a.Name, d, px)
			}
			in := 0
			for _, l := range balmer {
				if cov.Contains(l) {
					in++
				}
			}
			if in != st.lines {
				t.Errorf("run %d: %d Balmer lines on %.1f–%.1f nm, want %d", r.ID, in, cov.LowNM, cov.HighNM, st.lines)
			}
		}
		if nspec == 0 {
			t.Errorf("run %d: no spectrum", r.ID)
		}
	}
}

// demoWavelengths parses the first column of a demo spectrum CSV.
func demoWavelengths(t *testing.T, b []byte) []float64 {
	var x []float64
	for _, line := range strings.Split(string(b), "\n") {
		f, _, ok := strings.Cut(line, ",")
		if !ok || strings.HasPrefix(line, "#") {
			continue
		}
		if v, err := strconv.ParseFloat(f, 64); err == nil {
			x = append(x, v)
		}
	}
	return x
}

// checkDemoNoFuture: every time column of every table (named at or
// *_at) is at or before the seeding clock (the store's, fixed by the
// test); the real-clock tables at or before the real clock.
func checkDemoNoFuture(t *testing.T, db *store.DB, now time.Time) {
	q := db.SQL()
	rows, err := q.Query(`SELECT name FROM sqlite_master WHERE type = 'table' AND name NOT LIKE 'sqlite_%'`)
	if err != nil {
		t.Fatal(err)
	}
	var tables []string
	for rows.Next() {
		var n string
		rows.Scan(&n)
		tables = append(tables, n)
	}
	rows.Close()
	checked := 0
	for _, tb := range tables {
		cols, err := q.Query(`SELECT name FROM pragma_table_info(?)`, tb)
		if err != nil {
			t.Fatal(err)
		}
		var names []string
		for cols.Next() {
			var n string
			cols.Scan(&n)
			if n == "at" || strings.HasSuffix(n, "_at") {
				names = append(names, n)
			}
		}
		cols.Close()
		for _, c := range names {
			// The audit trail and the migration record are stamped by
			// SQLite with the real clock (unixepoch()): when the seeding
			// really happened, not scenario time. They must not be in the
			// real future either.
			limit := now
			if tb == "audit_log" || tb == "schema_migrations" {
				limit = time.Now()
			}
			var n int
			if err := q.QueryRow(`SELECT count(*) FROM "`+tb+`" WHERE "`+c+`" > ?`, limit.Unix()).Scan(&n); err != nil {
				t.Fatal(err)
			}
			checked++
			if n > 0 {
				t.Errorf("%s.%s: %d rows after the seeding clock %v", tb, c, n, now)
			}
		}
	}
	if checked < 10 {
		t.Errorf("only %d time columns checked", checked)
	}
}

// checkDemoReviewers: no status change or comment by the admin; returns
// and sign-offs by users with the reviewer role, and both demo reviewers
// sign off.
func checkDemoReviewers(t *testing.T, db *store.DB, adminID int64) {
	q := db.SQL()
	var n int
	q.QueryRow(`SELECT count(*) FROM status_events WHERE user_id = ?`, adminID).Scan(&n)
	if n > 0 {
		t.Errorf("%d status changes by the admin", n)
	}
	q.QueryRow(`SELECT count(*) FROM comments WHERE author_id = ?`, adminID).Scan(&n)
	if n > 0 {
		t.Errorf("%d comments by the admin", n)
	}
	q.QueryRow(`SELECT count(*) FROM runs WHERE signed_off_by = ?`, adminID).Scan(&n)
	if n > 0 {
		t.Errorf("%d runs signed off by the admin", n)
	}
	rows, err := q.Query(`SELECT u.name, u.role, count(*) FROM status_events e JOIN users u ON u.id = e.user_id
		WHERE e.to_status IN ('signed_off', 'returned') GROUP BY u.id`)
	if err != nil {
		t.Fatal(err)
	}
	defer rows.Close()
	signers := 0
	for rows.Next() {
		var name, role string
		var c int
		rows.Scan(&name, &role, &c)
		signers++
		if role != string(store.RoleReviewer) {
			t.Errorf("%s (%s) returned or signed off %d runs", name, role, c)
		}
	}
	if signers != 2 {
		t.Errorf("%d users returned or signed off runs, want the 2 demo reviewers", signers)
	}
}
