package store

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"reflect"
	"slices"
	"testing"
	"time"
)

// genTrendDB fills d with n runs of varied conditions and summaries
// (seeded): start times out of id order with ties, chambers, recipes and
// values sometimes NULL, every status and source type, four gas
// mixtures, three operators, tags on some runs.
func genTrendDB(t *testing.T, d *DB, n int) (chambers, recipes, ops []int64) {
	t.Helper()
	ctx := context.Background()
	for _, name := range []string{"Bell jar B-2", "Tube T-7", "Cross C-1"} {
		id, err := d.EnsureChamber(ctx, name, "")
		if err != nil {
			t.Fatal(err)
		}
		chambers = append(chambers, id)
	}
	for _, name := range []string{"Ar/H2 low power", "He/H2 pulsed"} {
		id, err := d.EnsureRecipe(ctx, name, "")
		if err != nil {
			t.Fatal(err)
		}
		recipes = append(recipes, id)
	}
	for _, name := range []string{"ivo.brand", "noor.vale", "tam.orr"} {
		u, err := d.CreateUser(ctx, name, RoleOperator, "x")
		if err != nil {
			t.Fatal(err)
		}
		ops = append(ops, u.ID)
	}
	rng := rand.New(rand.NewPCG(7, 11))
	maybe := func(p float64, v float64) any {
		if rng.Float64() < p {
			return nil
		}
		return v
	}
	pick := func(ids []int64, pNull float64) any {
		if rng.Float64() < pNull {
			return nil
		}
		return ids[rng.IntN(len(ids))]
	}
	gases := []string{"Ar 97 %, H2 3 %", "ar + 1 % h2", "He/H2_mix", ""}
	// Titles and notes for text search: cases, LIKE's wildcards, non-ASCII
	// letters (LIKE folds ASCII letters only), a word split between them.
	titles := []string{"gen", "Gen Électrode", "GEN window", "gen 50%_off", "Über gen"}
	notes := []string{"", "", "electrode cleaned", "Window Replaced", "électrode", "gen", "10% h2_x", "line\nnext"}
	statuses := []string{StatusDraft, StatusSubmitted, StatusReturned, StatusSignedOff}
	tx, err := d.db.Begin()
	if err != nil {
		t.Fatal(err)
	}
	defer tx.Rollback()
	t0 := time.Date(2026, 1, 1, 0, 0, 0, 0, time.UTC).Unix()
	for i := range n {
		started := t0 + int64(rng.IntN(n/3+1))*600 // ties between runs
		uncK := maybe(0.2, 40+60*rng.Float64())
		if rng.Float64() < 0.1 {
			uncK = 0.0 // a zero σ is "unknown" (YUnc 0), as on the SQL path
		}
		res, err := tx.Exec(`INSERT INTO runs (title, started_at, operator_id, chamber_id, recipe_id, source_type, gas_mixture,
			pressure_pa, power_w, electrode_gap_mm, instrument_fwhm_nm, gas_temperature_k, status, created_at, updated_at,
			texc_k, texc_unc_k, ne_m3, ne_unc_m3, tgas_k, n_warnings, notes)
			VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`,
			titles[i%len(titles)]+fmt.Sprintf(" %d", i), started, ops[rng.IntN(len(ops))], pick(chambers, 0.15), pick(recipes, 0.3),
			SourceTypes[rng.IntN(len(SourceTypes))].Key, gases[rng.IntN(len(gases))],
			maybe(0.1, 10+float64(rng.IntN(20))*5), maybe(0.1, 20+500*rng.Float64()), maybe(0.6, 0.5+rng.Float64()),
			maybe(0.3, 0.02+0.1*rng.Float64()), maybe(0.4, 300+float64(rng.IntN(8))*100), statuses[rng.IntN(4)], t0, t0,
			maybe(0.2, 3000+5000*rng.Float64()), uncK, maybe(0.25, 1e20*(1+50*rng.Float64())), maybe(0.3, 1e19*rng.Float64()),
			maybe(0.7, 400+1500*rng.Float64()), rng.IntN(4), notes[i%len(notes)])
		if err != nil {
			t.Fatal(err)
		}
		id, _ := res.LastInsertId()
		switch rng.IntN(6) {
		case 0:
			_, err = tx.Exec(`INSERT INTO run_tags (run_id, tag) VALUES (?, 'baseline')`, id)
		case 1:
			_, err = tx.Exec(`INSERT INTO run_tags (run_id, tag) VALUES (?, 'baseline'), (?, 'campaign-a')`, id, id)
		case 2:
			_, err = tx.Exec(`INSERT INTO run_tags (run_id, tag) VALUES (?, 'campaign-a')`, id)
		}
		if err != nil {
			t.Fatal(err)
		}
	}
	if err := tx.Commit(); err != nil {
		t.Fatal(err)
	}
	return chambers, recipes, ops
}

// sqlTrend is the series as the SQL path reads it (no cache, no columns).
func sqlTrend(t *testing.T, d *DB, f RunFilter, x, y string) TrendSeries {
	t.Helper()
	ts, _, err := d.trendRead(context.Background(), f, x, y, "", nil)
	if err != nil {
		t.Fatal(err)
	}
	sortTrend(ts.Points)
	return ts
}

// compareTrends checks the column store's series against the SQL path's
// for the filters and field pairs given.
func compareTrends(t *testing.T, d *DB, filters []RunFilter, pairs [][2]string) {
	t.Helper()
	ctx := context.Background()
	for _, f := range filters {
		for _, p := range pairs {
			got, err := d.TrendSeries(ctx, f, p[0], p[1])
			if err != nil {
				t.Fatal(err)
			}
			if d.cols.state != colsReady {
				t.Fatalf("column store not in use (state %d)", d.cols.state)
			}
			if f.Query != "" && d.cols.text == nil {
				t.Fatalf("filter %+v: the column store holds no text", f)
			}
			want := sqlTrend(t, d, f, p[0], p[1])
			if !reflect.DeepEqual(got, want) {
				t.Errorf("filter %+v, %s against %s: columns give %d points, %d missing; SQL %d points, %d missing%s",
					f, p[1], p[0], len(got.Points), got.Missing, len(want.Points), want.Missing, firstDiff(got.Points, want.Points))
			}
		}
	}
}

func firstDiff(a, b []TrendPoint) string {
	for i := range min(len(a), len(b)) {
		if a[i] != b[i] {
			return fmt.Sprintf("; first difference at %d: %+v vs %+v", i, a[i], b[i])
		}
	}
	return ""
}

// trendFilterSample is a sample of the trend page's filters over a
// generated database: each filter alone, combinations, and values that
// match nothing.
func trendFilterSample(chambers, recipes, ops []int64) []RunFilter {
	day := func(d int) time.Time { return time.Date(2026, 1, 1, 0, 0, 0, 0, time.UTC).AddDate(0, 0, d) }
	return []RunFilter{
		{},
		{ChamberID: chambers[0]},
		{ChamberID: 999},
		{RecipeID: recipes[1]},
		{OperatorID: ops[2]},
		{SourceType: "microwave"},
		{SourceType: "nonesuch"},
		{Status: StatusSignedOff},
		{Status: StatusDraft},
		{Gas: "h2"},
		{Gas: " AR "},
		{Gas: "%"},
		{Gas: "_"},
		{Gas: "H2_m"},
		{Tag: "baseline"},
		{Tag: "Campaign-A"},
		{Tag: "nope"},
		{From: day(3)},
		{To: day(5)},
		{From: day(2), To: day(4)},
		{ChamberID: chambers[1], Status: StatusSubmitted, From: day(1)},
		{RecipeID: recipes[0], Tag: "baseline", Gas: "ar", SourceType: "dc_glow"},
		{OperatorID: ops[0], ChamberID: chambers[2], To: day(6)},
		{Query: "gen"},
		{Query: "GEN 1"},
		{Query: "window"},
		{Query: "électrode"},
		{Query: "ÉLECTRODE"},
		{Query: "lectrode"},
		{Query: "h2"},
		{Query: "%"},
		{Query: "_off"},
		{Query: "0%"},
		{Query: "\\n"},
		{Query: "zzz"},
		{Query: "über 99"},
		{Query: "cleaned", ChamberID: chambers[1]},
		{Query: "1", Status: StatusDraft, Tag: "baseline"},
		{Query: "e", Gas: "h2"},
	}
}

// TestTrendColumnsMatchSQL: on a generated database the column store
// answers every filter of the trend page, for every pair of plotted
// quantities, exactly as the SQL path does (points, order, σ, missing
// count), before and after changes of every kind.
func TestTrendColumnsMatchSQL(t *testing.T) {
	ctx := context.Background()
	d, _ := openTrendDB(t)
	chambers, recipes, ops := genTrendDB(t, d, 2000)
	filters := trendFilterSample(chambers, recipes, ops)

	var allPairs [][2]string
	for _, x := range TrendFields {
		for _, y := range TrendFields {
			allPairs = append(allPairs, [2]string{x.Key, y.Key})
		}
	}
	compareTrends(t, d, filters[:2], allPairs)
	somePairs := [][2]string{{"started_at", "texc_k"}, {"power_w", "ne_m3"}, {"started_at", "n_warnings"}}
	compareTrends(t, d, filters, somePairs)

	// Changes of every kind, then the same comparison.
	rev, err := d.CreateUser(ctx, "bea.marsh", RoleReviewer, "x")
	if err != nil {
		t.Fatal(err)
	}
	op, _ := d.UserByID(ctx, ops[0])
	exec := func(q string, args ...any) {
		t.Helper()
		if _, err := d.db.Exec(q, args...); err != nil {
			t.Fatal(err)
		}
	}
	// A new run through the store, with tags and a chamber.
	newID, err := d.CreateRun(ctx, op.ID, RunInput{Title: "late", StartedAt: time.Date(2026, 1, 2, 3, 0, 0, 0, time.UTC),
		ChamberID: &chambers[0], SourceType: "microwave", GasMixture: "Ar + H2", Tags: []string{"baseline"}})
	if err != nil {
		t.Fatal(err)
	}
	// Its analysis (the analysis service's store path), then review
	// transitions up to sign-off.
	if _, err := d.AddAnalysis(ctx, newID, NewAnalysis{Settings: "{}", EngineVersion: "t",
		Results: []AnalysisResult{{AttachmentID: mustAttach(t, d, newID), TexcK: f64(5555), TexcUncK: f64(55), NeM3: f64(3e20)}}}); err != nil {
		t.Fatal(err)
	}
	if _, err := d.Review(ctx, newID, op, ActionSubmit, ""); err != nil {
		t.Fatal(err)
	}
	if _, err := d.Review(ctx, newID, rev, ActionSignOff, "ok"); err != nil {
		t.Fatal(err)
	}
	// An edit: run 10 moves chamber, start time and tags.
	r10, err := d.GetRun(ctx, 10)
	if err != nil {
		t.Fatal(err)
	}
	in := RunInput{Title: r10.Title, StartedAt: r10.StartedAt.Add(-48 * time.Hour), ChamberID: &chambers[2], SourceType: r10.SourceType,
		GasMixture: "He", Tags: []string{"campaign-a", "moved"}}
	if err := d.UpdateRun(ctx, 10, in); err != nil {
		t.Fatal(err)
	}
	// Summaries changed, one value gone, a run deleted, and a run put
	// back under a freed id below the highest (positions shift).
	exec(`UPDATE runs SET texc_k = texc_k + 1000, ne_m3 = NULL WHERE id % 97 = 0`)
	exec(`UPDATE runs SET status = 'returned', power_w = 1e6 WHERE id BETWEEN 200 AND 260`)
	exec(`DELETE FROM run_tags WHERE run_id BETWEEN 300 AND 400`)
	exec(`UPDATE runs SET notes = 'now WINDOW cleaned' WHERE id % 13 = 0`)
	exec(`UPDATE runs SET title = 'renamed ' || id WHERE id % 29 = 0`)
	exec(`UPDATE runs SET title = title || ' last' WHERE id = (SELECT max(id) FROM runs)`)
	exec(`DELETE FROM runs WHERE id IN (20, 21, 22)`)
	exec(`INSERT INTO runs (id, title, started_at, operator_id, source_type, status, created_at, updated_at, texc_k, ne_m3, pressure_pa)
		VALUES (21, 'back', 1767225600, ?, 'dc_glow', 'draft', 0, 0, 4321, 1e21, 55)`, ops[1])
	filters = append(filters, RunFilter{Query: "back"}, RunFilter{Query: "now"}, RunFilter{Query: "renamed 5"},
		RunFilter{Query: "last"}, RunFilter{Query: "cleaned"})
	compareTrends(t, d, filters, somePairs)
	compareTrends(t, d, filters[:1], allPairs)
	if i, ok := findPos(d, 21); !ok || d.cols.status[i] == 0 {
		t.Errorf("run 21 put back: not held by the columns")
	}
	if _, ok := findPos(d, 20); ok {
		if i, _ := findPos(d, 20); d.cols.status[i] != 0 {
			t.Errorf("deleted run 20 still held")
		}
	}
}

func findPos(d *DB, id int64) (int, bool) {
	for i, v := range d.cols.id {
		if v == id {
			return i, true
		}
	}
	return 0, false
}

// TestTrendShowsChangeAtOnce: a trend already shown reflects a change of
// a run in the very next read, whatever path changed it: a new analysis,
// an edit (chamber, tags), sign-off and reopen.
func TestTrendShowsChangeAtOnce(t *testing.T) {
	ctx := context.Background()
	d, opID := openTrendDB(t)
	op, _ := d.UserByID(ctx, opID)
	rev, _ := d.CreateUser(ctx, "bea.marsh", RoleReviewer, "x")
	chA, _ := d.EnsureChamber(ctx, "Bell jar B-2", "")
	chB, _ := d.EnsureChamber(ctx, "Tube T-7", "")
	t0 := time.Date(2026, 5, 1, 8, 0, 0, 0, time.UTC)
	run, err := d.CreateRun(ctx, opID, RunInput{Title: "r", StartedAt: t0, ChamberID: &chA, SourceType: "dc_glow"})
	if err != nil {
		t.Fatal(err)
	}
	att := mustAttach(t, d, run)
	analyse := func(texc float64) {
		t.Helper()
		if _, err := d.AddAnalysis(ctx, run, NewAnalysis{Settings: "{}", EngineVersion: "t",
			Results: []AnalysisResult{{AttachmentID: att, TexcK: f64(texc), TexcUncK: f64(10)}}}); err != nil {
			t.Fatal(err)
		}
	}
	trend := func(f RunFilter) TrendSeries {
		t.Helper()
		ts, err := d.TrendSeries(ctx, f, "started_at", "texc_k")
		if err != nil {
			t.Fatal(err)
		}
		return ts
	}
	one := func(what string, f RunFilter, want float64) {
		t.Helper()
		ts := trend(f)
		if len(ts.Points) != 1 || ts.Points[0].Y != want {
			t.Errorf("%s: trend %+v, want one point at %g", what, ts.Points, want)
		}
	}
	none := func(what string, f RunFilter) {
		t.Helper()
		if ts := trend(f); len(ts.Points) != 0 {
			t.Errorf("%s: trend %+v, want no point", what, ts.Points)
		}
	}
	if ts := trend(RunFilter{}); len(ts.Points) != 0 || ts.Missing != 1 {
		t.Fatalf("before any analysis: %+v", ts)
	}
	analyse(4000)
	one("first analysis", RunFilter{}, 4000)
	one("first analysis, chamber A", RunFilter{ChamberID: chA}, 4000)
	analyse(4100)
	one("reanalysis", RunFilter{}, 4100)

	in := RunInput{Title: "r", StartedAt: t0, ChamberID: &chB, SourceType: "dc_glow", Tags: []string{"scan"}}
	if err := d.UpdateRun(ctx, run, in); err != nil {
		t.Fatal(err)
	}
	none("moved to chamber B, chamber A", RunFilter{ChamberID: chA})
	one("moved to chamber B, chamber B", RunFilter{ChamberID: chB}, 4100)
	one("tagged", RunFilter{Tag: "scan"}, 4100)

	if _, err := d.Review(ctx, run, op, ActionSubmit, ""); err != nil {
		t.Fatal(err)
	}
	if _, err := d.Review(ctx, run, rev, ActionSignOff, ""); err != nil {
		t.Fatal(err)
	}
	one("signed off", RunFilter{Status: StatusSignedOff}, 4100)
	analyse(9000) // kept, not shown: the run is signed off
	one("version after sign-off", RunFilter{}, 4100)
	if _, err := d.Review(ctx, run, rev, ActionReopen, "wrong lamp file"); err != nil {
		t.Fatal(err)
	}
	none("reopened, signed-off filter", RunFilter{Status: StatusSignedOff})
	one("reopened: the newest version", RunFilter{Status: StatusReturned}, 9000)
	if d.cols.state != colsReady {
		t.Errorf("the column store answered none of these (state %d)", d.cols.state)
	}
}

// TestTrendColumnsCatchUpAfterPrune: when the change log no longer
// reaches back to the columns (pruned by another process), the store is
// read afresh rather than shown stale.
func TestTrendColumnsCatchUpAfterPrune(t *testing.T) {
	ctx := context.Background()
	d, opID := openTrendDB(t)
	run, err := d.CreateRun(ctx, opID, RunInput{Title: "r", StartedAt: time.Now(), SourceType: "dc_glow"})
	if err != nil {
		t.Fatal(err)
	}
	setSummary(t, d, run, 3000, 10, 0)
	if ts, _ := d.TrendSeries(ctx, RunFilter{}, "started_at", "texc_k"); len(ts.Points) != 1 {
		t.Fatalf("first trend: %+v", ts.Points)
	}
	setSummary(t, d, run, 3500, 10, 0)
	setSummary(t, d, run, 3600, 10, 0)
	if _, err := d.db.Exec(`DELETE FROM run_changes WHERE seq < (SELECT max(seq) FROM run_changes)`); err != nil {
		t.Fatal(err)
	}
	if ts, _ := d.TrendSeries(ctx, RunFilter{}, "started_at", "texc_k"); len(ts.Points) != 1 || ts.Points[0].Y != 3600 {
		t.Fatalf("after a pruned log: %+v, want 3600", ts.Points)
	}
}

// TestTrendColumnsConcurrent: trends read while runs change (run with
// -race): no data race, and once the writes stop the series equals the
// SQL path's.
func TestTrendColumnsConcurrent(t *testing.T) {
	ctx := context.Background()
	d, _ := openTrendDB(t)
	chambers, recipes, ops := genTrendDB(t, d, 300)
	filters := trendFilterSample(chambers, recipes, ops)
	// The run list's searches from the columns, walking orders.
	listSQLRows, listSortMax = 0, 10
	t.Cleanup(func() { listSQLRows, listSortMax = 20000, 20000 })
	done := make(chan struct{})
	errs := make(chan error, 8)
	go func() {
		defer close(done)
		for i := range 60 {
			if _, err := d.db.Exec(`UPDATE runs SET texc_k = ?, chamber_id = ?, started_at = started_at + 60, title = title || ' x' WHERE id = ?`,
				5000+float64(i), chambers[i%len(chambers)], 1+(i*37)%300); err != nil {
				errs <- err
				return
			}
		}
	}()
	for r := range 3 {
		go func() {
			for k := 0; ; k++ {
				select {
				case <-done:
					errs <- nil
					return
				default:
				}
				f := filters[(r+k)%len(filters)]
				// x cycles through more quantities than the store keeps
				// orders of, so that readers drop each other's orders; the
				// run list's searches walk orders too.
				x := []string{"started_at", "pressure_pa", "power_w", "electrode_gap_mm", "gas_temperature_k"}[(r+k)%5]
				if _, err := d.TrendSeries(ctx, f, x, "texc_k"); err != nil {
					errs <- err
					return
				}
				sort := []string{"title", "-texc", "ne", "status"}[(r+k)%4]
				if _, _, _, err := d.ListRunsCapped(ctx, RunFilter{Query: "gen", Sort: sort, Limit: 20, Offset: 40}, 100); err != nil {
					errs <- err
					return
				}
			}
		}()
	}
	for range 3 {
		if err := <-errs; err != nil {
			t.Fatal(err)
		}
	}
	compareTrends(t, d, filters, [][2]string{{"started_at", "texc_k"}, {"pressure_pa", "texc_k"}, {"power_w", "texc_k"}})
}

// TestTrendColumnsCompact: every value column is loaded with the store,
// conditions with few values as one-byte codes, results as doubles, and
// the numbers read back exactly; a column widens as values are added
// (codes of one byte, two bytes, then the values themselves), keeping
// every value bit for bit (−0, NULL, the largest doubles).
func TestTrendColumnsCompact(t *testing.T) {
	d, _ := openTrendDB(t)
	genTrendDB(t, d, 400)
	if _, err := d.TrendSeries(context.Background(), RunFilter{}, "started_at", "texc_k"); err != nil {
		t.Fatal(err)
	}
	for _, col := range colsValues {
		if d.cols.vals[col] == nil || d.cols.vals[col].len() != len(d.cols.id) {
			t.Fatalf("column %s not loaded with the store", col)
		}
	}
	if v := d.cols.vals["pressure_pa"]; v.c8 == nil {
		t.Errorf("pressure_pa (20 set points) not held as byte codes")
	}
	if v := d.cols.vals["texc_k"]; v.c16 == nil {
		t.Errorf("texc_k (about 320 distinct values and NULL) not held as two-byte codes")
	}

	v := newValCol(0)
	var want []float64
	add := func(x float64) {
		v.append(x)
		want = append(want, x)
	}
	check := func(stage string) {
		t.Helper()
		for i, w := range want {
			if g := v.at(int32(i)); math.Float64bits(g) != math.Float64bits(w) && !(g != g && w != w) {
				t.Fatalf("%s: value %d is %v, want %v", stage, i, g, w)
			}
		}
	}
	add(math.NaN())
	add(math.Copysign(0, -1))
	add(0)
	for i := range 250 {
		add(float64(i) * 0.1)
	}
	check("bytes")
	if v.c8 == nil {
		t.Fatal("253 values: want byte codes")
	}
	for i := range 1000 {
		add(1e300 + float64(i)*1e285)
	}
	v.set(3, math.MaxFloat64)
	want[3] = math.MaxFloat64
	v.insert(5, 42.5)
	want = slices.Insert(want, 5, 42.5)
	check("two bytes")
	if v.c16 == nil {
		t.Fatal("1254 values: want two-byte codes")
	}
	for i := range 70000 {
		add(float64(i) + 0.5)
	}
	v.set(7, -1)
	want[7] = -1
	check("doubles")
	if v.f == nil {
		t.Fatal("71254 values: want doubles")
	}
}
