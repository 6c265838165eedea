package server

import (
	"context"
	"encoding/csv"
	"net/http"
	"regexp"
	"strings"
	"testing"
	"time"

	"glowlog/store"
)

var rowIDs = regexp.MustCompile(`data-testid="run-row" data-run-id="(\d+)"`)

func listedIDs(body string) []string {
	var out []string
	for _, m := range rowIDs.FindAllStringSubmatch(body, -1) {
		out = append(out, m[1])
	}
	return out
}

// seedListRuns stores five runs with known conditions and summaries and
// returns their ids in creation order.
func seedListRuns(t *testing.T, f *runsFixture, opID int64) []int64 {
	t.Helper()
	ctx := context.Background()
	jar, _ := f.db.EnsureChamber(ctx, "Bell jar A", "")
	tube, _ := f.db.EnsureChamber(ctx, "Quartz tube 3", "")
	t0 := time.Date(2026, 3, 1, 9, 0, 0, 0, time.UTC)
	runs := []struct {
		in         store.RunInput
		texc, ne   float64
		status     string
		warnings   int
		unanalysed bool
	}{
		{store.RunInput{Title: "Baseline glow", ChamberID: &jar, SourceType: "dc_glow", GasMixture: "H2", Notes: "new cathode", Tags: []string{"baseline"}}, 3500, 8e20, "draft", 0, false},
		{store.RunInput{Title: "=HYPERLINK(\"x\")", ChamberID: &jar, SourceType: "rf_capacitive", GasMixture: "H2/Ar 5 %"}, 5200, 2e21, "submitted", 2, false},
		{store.RunInput{Title: "RF sweep 40 W", ChamberID: &tube, SourceType: "rf_capacitive", GasMixture: "H2/Ar 5 %", Tags: []string{"sweep"}}, 4100, 1.2e21, "signed_off", 1, false},
		{store.RunInput{Title: "-5 V bias check", ChamberID: &tube, SourceType: "microwave", GasMixture: "H2/He", Notes: "+ window fogged"}, 6100, 3e21, "draft", 0, false},
		{store.RunInput{Title: "Jet nozzle 2", SourceType: "plasma_jet", GasMixture: "He/H2"}, 0, 0, "draft", 0, true},
	}
	var ids []int64
	for i, r := range runs {
		r.in.StartedAt = t0.Add(time.Duration(i) * 24 * time.Hour)
		id, err := f.db.CreateRun(ctx, opID, r.in)
		if err != nil {
			t.Fatal(err)
		}
		if !r.unanalysed {
			if _, err := f.db.SQL().Exec(`UPDATE runs SET texc_k = ?, texc_unc_k = ?, ne_m3 = ?, ne_unc_m3 = ?, n_warnings = ?,
				analysis_version = 1, status = ? WHERE id = ?`, r.texc, r.texc/20, r.ne, r.ne/10, r.warnings, r.status, id); err != nil {
				t.Fatal(err)
			}
		}
		ids = append(ids, id)
	}
	return ids
}

func TestRunListFiltersAndSort(t *testing.T) {
	f := newRunsFixture(t)
	op, sess := f.signIn("opal", store.RoleOperator)
	ids := seedListRuns(t, f, op.ID)
	s := func(i int) string { return idStr(ids[i]) }

	for _, tc := range []struct {
		query string
		want  []string
	}{
		{"", []string{s(4), s(3), s(2), s(1), s(0)}}, // newest first
		{"?q=cathode", []string{s(0)}},
		{"?q=rf+sweep", []string{s(2)}},
		{"?gas=Ar", []string{s(2), s(1)}},
		{"?source=rf_capacitive", []string{s(2), s(1)}},
		{"?chamber=" + idStr(*mustRun(t, f, ids[2]).ChamberID), []string{s(3), s(2)}},
		{"?status=draft", []string{s(4), s(3), s(0)}},
		{"?tag=sweep", []string{s(2)}},
		{"?from=2026-03-02&to=2026-03-03", []string{s(2), s(1)}},
		{"?operator=" + idStr(op.ID) + "&sort=started", []string{s(0), s(1), s(2), s(3), s(4)}},
		{"?sort=texc", []string{s(0), s(2), s(1), s(3), s(4)}}, // no value last
		{"?sort=-ne", []string{s(3), s(1), s(2), s(0), s(4)}},
		{"?sort=title", []string{s(3), s(1), s(0), s(4), s(2)}},
	} {
		rec := f.get("/runs"+tc.query, sess)
		if rec.Code != http.StatusOK {
			t.Errorf("%s: status %d", tc.query, rec.Code)
			continue
		}
		if got := listedIDs(rec.Body.String()); strings.Join(got, ",") != strings.Join(tc.want, ",") {
			t.Errorf("%s: runs %v, want %v", tc.query, got, tc.want)
		}
	}

	rec := f.get("/runs?gas=Ar&sort=-texc", sess)
	body := rec.Body.String()
	for _, want := range []string{
		`href="/runs.csv?gas=Ar&amp;sort=-texc"`, // CSV link keeps the query
		`href="/runs?gas=Ar&amp;sort=texc"`,      // clicking the sorted column flips it
		`<span class="badge submitted" data-testid="run-status">Submitted</span>`,
		`2026-03-02 09:00`,
		`(2.00 ± 0.20) × 10²¹`, // n_e ± σ
		`5200 ± 260`,           // T_exc ± σ
	} {
		if !strings.Contains(body, want) {
			t.Errorf("list lacks %s", want)
		}
	}
	for _, bad := range []string{"?from=March", "?sort=operator", "?status=lost", "?page=0", "?chamber=x"} {
		if rec := f.get("/runs"+bad, sess); rec.Code != http.StatusBadRequest {
			t.Errorf("%s: status %d, want 400", bad, rec.Code)
		}
	}
	// Signed out: to the sign-in page.
	if rec := f.get("/runs", nil); rec.Code != http.StatusSeeOther || !strings.HasPrefix(rec.Header().Get("Location"), "/login") {
		t.Errorf("signed out: %d %q", rec.Code, rec.Header().Get("Location"))
	}
}

func mustRun(t *testing.T, f *runsFixture, id int64) store.Run {
	t.Helper()
	r, err := f.db.GetRun(context.Background(), id)
	if err != nil {
		t.Fatal(err)
	}
	return r
}

func TestRunListPagination(t *testing.T) {
	f := newRunsFixture(t)
	op, sess := f.signIn("opal", store.RoleOperator)
	ctx := context.Background()
	t0 := time.Date(2026, 1, 1, 0, 0, 0, 0, time.UTC)
	for i := range 123 {
		gas := "H2/Ar"
		if i%10 == 0 {
			gas = "H2/He"
		}
		if _, err := f.db.CreateRun(ctx, op.ID, store.RunInput{Title: "run", StartedAt: t0.Add(time.Duration(i) * time.Hour),
			SourceType: "dc_glow", GasMixture: gas}); err != nil {
			t.Fatal(err)
		}
	}
	rec := f.get("/runs?gas=Ar", sess) // 123 − 13 = 110 runs: 3 pages
	body := rec.Body.String()
	if n := len(listedIDs(body)); n != 50 {
		t.Errorf("page 1 has %d rows, want 50", n)
	}
	if !strings.Contains(body, "110 runs · showing 1–50") || !strings.Contains(body, `href="/runs?gas=Ar&amp;page=2"`) {
		t.Error("page 1 lacks the total or a link to page 2 keeping the filter")
	}
	rec = f.get("/runs?gas=Ar&page=3", sess)
	body = rec.Body.String()
	if n := len(listedIDs(body)); n != 10 || !strings.Contains(body, "showing 101–110") || !strings.Contains(body, `rel="prev"`) {
		t.Errorf("page 3 has %d rows, want 10", n)
	}
	if rec := f.get("/runs?gas=Ar&page=9", sess); rec.Code != http.StatusSeeOther || rec.Header().Get("Location") != "/runs?gas=Ar&page=3" {
		t.Errorf("page past the end: %d %q", rec.Code, rec.Header().Get("Location"))
	}
}

func TestRunExportCSV(t *testing.T) {
	f := newRunsFixture(t)
	op, sess := f.signIn("opal", store.RoleOperator)
	ids := seedListRuns(t, f, op.ID)
	rec := f.get("/runs.csv?sort=started", sess)
	if rec.Code != http.StatusOK {
		t.Fatalf("status %d", rec.Code)
	}
	if cd := rec.Header().Get("Content-Disposition"); cd != `attachment; filename="glowlog-runs.csv"` {
		t.Errorf("Content-Disposition %q", cd)
	}
	if !strings.HasPrefix(rec.Header().Get("Content-Type"), "text/csv") || !strings.Contains(rec.Body.String(), "\r\n") {
		t.Error("not RFC 4180 CSV (type or CRLF)")
	}
	rows, err := csv.NewReader(strings.NewReader(rec.Body.String())).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	if len(rows) != 1+len(ids) {
		t.Fatalf("%d rows, want header + %d", len(rows), len(ids))
	}
	col := map[string]int{}
	for i, h := range rows[0] {
		col[h] = i
	}
	for _, h := range []string{"texc_K", "texc_K_unc_total_1sigma", "ne_m3", "ne_m3_unc_total_1sigma", "pressure_Pa", "power_W", "started_at_utc"} {
		if _, ok := col[h]; !ok {
			t.Errorf("header lacks %s", h)
		}
	}
	if got := rows[2][col["title"]]; got != `'=HYPERLINK("x")` {
		t.Errorf("formula title exported as %q", got)
	}
	if got := rows[4][col["title"]]; got != "'-5 V bias check" {
		t.Errorf("minus title exported as %q", got)
	}
	if got := rows[4][col["notes"]]; got != "'+ window fogged" {
		t.Errorf("notes exported as %q", got)
	}
	if got := rows[2][col["ne_m3"]]; got != "2e+21" {
		t.Errorf("n_e exported as %q (a number is not guarded)", got)
	}
	if got := rows[1][col["tags"]]; got != "baseline" {
		t.Errorf("tags %q", got)
	}
	if got := rows[5][col["texc_K"]]; got != "" {
		t.Errorf("unanalysed run: texc %q, want empty", got)
	}
	// The filters apply to the export (all pages).
	rec = f.get("/runs.csv?source=rf_capacitive", sess)
	if rows, _ := csv.NewReader(strings.NewReader(rec.Body.String())).ReadAll(); len(rows) != 3 {
		t.Errorf("filtered export: %d rows, want 3", len(rows))
	}
}

func TestCSVText(t *testing.T) {
	for in, want := range map[string]string{"": "", "plain": "plain", "=1+2": "'=1+2", "+x": "'+x", "-x": "'-x", "@SUM(A1)": "'@SUM(A1)",
		"\t=1": "'\t=1", "a=b": "a=b"} {
		if got := csvText(in); got != want {
			t.Errorf("csvText(%q) = %q, want %q", in, got, want)
		}
	}
}
