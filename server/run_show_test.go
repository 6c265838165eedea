package server

import (
	"context"
	"encoding/csv"
	"encoding/json"
	"glowlog/diag/spectrum"
	"io"
	"net/http"
	"net/http/httptest"
	"os"
	"regexp"
	"strconv"
	"strings"
	"testing"
	"time"

	"glowlog/store"
)

// showFixture is a server with one run whose spectrum was analysed by the
// real analysis service (two versions).
type showFixture struct {
	s      *Server
	cookie *http.Cookie
	runID  int64
	attID  int64
}

func newShowFixture(t *testing.T) *showFixture {
	t.Helper()
	ctx := context.Background()
	db := testDB(t)
	s := New(db, Options{})
	u, err := db.CreateUser(ctx, "ada.quill", store.RoleOperator, "not-a-hash")
	if err != nil {
		t.Fatal(err)
	}
	fwhm, tg, p := 0.35, 1000.0, 120.0
	runID, err := db.CreateRun(ctx, u.ID, store.RunInput{Title: "Fenwick Hollow H2 glow, 120 Pa", StartedAt: time.Date(2026, 3, 4, 9, 30, 0, 0, time.UTC),
		SourceType: "dc_glow", GasMixture: "H2", PressurePa: &p, InstrumentFWHMNM: &fwhm, GasTemperatureK: &tg, Notes: "cathode cleaned", Tags: []string{"baseline"}})
	if err != nil {
		t.Fatal(err)
	}
	content, err := os.ReadFile("../testdata/spectra/scipy_bench_2048.csv")
	if err != nil {
		t.Fatal(err)
	}
	tx, err := db.Begin(ctx)
	if err != nil {
		t.Fatal(err)
	}
	attID, err := db.AddAttachmentTx(ctx, tx, runID, store.KindSpectrum, "scipy_bench_2048.csv", content)
	if err != nil {
		t.Fatal(err)
	}
	atts := []store.Attachment{{ID: attID, RunID: runID, Kind: store.KindSpectrum, Name: "scipy_bench_2048.csv", Seq: 1, Content: content}}
	st := AnalysisSettings{InstrumentFWHMNM: 0.35, GasTemperatureK: 1000, LineShape: spectrum.LineShapeVoigt} // Voigt-shaped scipy lines
	if _, _, err := s.ReanalyzeRunTx(ctx, tx, runID, atts, st, &u.ID, "first analysis"); err != nil {
		t.Fatal(err)
	}
	if err := tx.Commit(); err != nil {
		t.Fatal(err)
	}
	st.GasTemperatureK = 1500
	if _, err := s.ReanalyzeRun(ctx, runID, st, &u.ID, "warmer gas"); err != nil {
		t.Fatal(err)
	}
	tok, hash := NewToken()
	if err := db.CreateSession(ctx, hash, u.ID, time.Hour); err != nil {
		t.Fatal(err)
	}
	return &showFixture{s: s, cookie: &http.Cookie{Name: sessionCookie, Value: tok}, runID: runID, attID: attID}
}

func (f *showFixture) get(t *testing.T, path string) (int, http.Header, string) {
	t.Helper()
	req := httptest.NewRequest(http.MethodGet, path, nil)
	req.AddCookie(f.cookie)
	rec := httptest.NewRecorder()
	f.s.ServeHTTP(rec, req)
	body, _ := io.ReadAll(rec.Body)
	return rec.Code, rec.Header(), string(body)
}

func (f *showFixture) path(suffix string) string {
	return "/runs/" + strconv.FormatInt(f.runID, 10) + suffix
}

// testidInner returns the inner HTML of the first element with
// data-testid=id (up to the next closing tag of the same name).
func testidInner(body, id string) string {
	re := regexp.MustCompile(`<(\w+)[^>]*data-testid="` + regexp.QuoteMeta(id) + `"[^>]*>`)
	loc := re.FindStringSubmatchIndex(body)
	if loc == nil {
		return ""
	}
	tag := body[loc[2]:loc[3]]
	rest := body[loc[1]:]
	if end := strings.Index(rest, "</"+tag+">"); end >= 0 {
		return rest[:end]
	}
	return rest
}

func TestShowRunPage(t *testing.T) {
	f := newShowFixture(t)
	code, _, body := f.get(t, f.path("?v=1"))
	if code != http.StatusOK {
		t.Fatalf("GET run page: %d\n%s", code, body)
	}
	// The first version fits six lines of the synthetic spectrum to
	// T_exc ≈ 12 000 K and n_e ≈ 5 × 10²¹ m⁻³ (the truth file's values).
	texc := testidInner(body, "texc")
	if !regexp.MustCompile(`1[12]\d{3} ± \d+ K`).MatchString(texc) {
		t.Errorf("T_exc = %q, want about 12000 ± σ K", texc)
	}
	ne := testidInner(body, "ne-m3")
	if !strings.Contains(ne, "× 10²¹") || !strings.Contains(ne, "m⁻³") {
		t.Errorf("n_e (m⁻³) = %q, want (… ± …) × 10²¹ m⁻³", ne)
	}
	if cm := testidInner(body, "ne-cm3"); !strings.Contains(cm, "× 10¹⁵") || !strings.Contains(cm, "cm⁻³") {
		t.Errorf("n_e (cm⁻³) = %q, want (… ± …) × 10¹⁵ cm⁻³", cm)
	}
	if src := testidInner(body, "ne-source"); !strings.Contains(src, "Hβ") {
		t.Errorf("n_e source = %q, want Hβ", src)
	}
	for _, id := range []string{"lines", "budget", "line-search", "warnings", "provenance", "versions", "downloads", "conditions", "spectrometer", "boltzmann-figure", "window-figure"} {
		if !strings.Contains(body, `data-testid="`+id+`"`) {
			t.Errorf("run page lacks %s", id)
		}
	}
	for _, want := range []string{"Pressure", "120 Pa", "Instrument FWHM, Gaussian (nm)", "CODATA 2018", "cross-checked",
		"2026-03-04 09:30 UTC", "first analysis", "warmer gas", `data-testid="method-notes"`, `data-severity="note"`, "<title>Boltzmann plot", `role="img"`, `<svg width="100%"`} {
		if !strings.Contains(body, want) {
			t.Errorf("run page lacks %q", want)
		}
	}
	// Versions list: both versions, v1 marked as shown.
	vs := testidInner(body, "versions")
	if !strings.Contains(vs, `data-version="2"`) || !strings.Contains(vs, `data-version="1"`) {
		t.Errorf("versions list lacks a version:\n%s", vs)
	}
	if !regexp.MustCompile(`(?s)class="current" data-version="1".*current-version`).MatchString(vs) {
		t.Errorf("version 1 is not marked as shown:\n%s", vs)
	}
	// The forms and panel of the other areas are included.
	for _, id := range []string{`data-testid="reanalyze-form"`, `data-testid="review-panel"`} {
		if !strings.Contains(body, id) {
			t.Errorf("run page lacks %s", id)
		}
	}

	// Without ?v= the newest version is shown.
	_, _, body2 := f.get(t, f.path(""))
	if !strings.Contains(body2, "Results of analysis version 2") {
		t.Errorf("run page without ?v= does not show the newest version")
	}
}

func TestShowRunNotFound(t *testing.T) {
	f := newShowFixture(t)
	for _, tc := range []struct {
		path string
		code int
	}{
		{"/runs/9999", http.StatusNotFound},
		{"/runs/abc", http.StatusNotFound},
		{f.path("?v=7"), http.StatusNotFound},
		{f.path("?a=9999"), http.StatusNotFound},
		{f.path("?v=x"), http.StatusBadRequest},
		{"/runs/9999/boltzmann.svg", http.StatusNotFound},
		{f.path("/window.svg?k=99"), http.StatusNotFound},
		{f.path("/window.svg?k=-1"), http.StatusBadRequest},
		{f.path("/lines.csv?v=3"), http.StatusNotFound},
		{f.path("/report?v=9"), http.StatusNotFound},
	} {
		if code, _, _ := f.get(t, tc.path); code != tc.code {
			t.Errorf("GET %s = %d, want %d", tc.path, code, tc.code)
		}
	}
	// Signed out: sent to sign in, no data.
	req := httptest.NewRequest(http.MethodGet, f.path(""), nil)
	rec := httptest.NewRecorder()
	f.s.ServeHTTP(rec, req)
	if rec.Code == http.StatusOK {
		t.Errorf("signed-out GET run page = 200")
	}
}

func TestShowRunFigures(t *testing.T) {
	f := newShowFixture(t)
	code, h, svg := f.get(t, f.path("/boltzmann.svg?v=1"))
	if code != http.StatusOK || h.Get("Content-Type") != "image/svg+xml" {
		t.Fatalf("boltzmann.svg: %d %s", code, h.Get("Content-Type"))
	}
	saveFigure(t, "run-boltzmann.svg", []byte(svg))
	for _, want := range []string{`role="img"`, "<title>Boltzmann plot: T_exc = ", "<desc>", "upper-level energy E_k (eV)", "ln(I / (g_k A_ki))", "weighted fit: T_exc"} {
		if !strings.Contains(svg, want) {
			t.Errorf("Boltzmann SVG lacks %q", want)
		}
	}
	code, h, svg = f.get(t, f.path("/window.svg?v=1&k=0"))
	if code != http.StatusOK || h.Get("Content-Type") != "image/svg+xml" {
		t.Fatalf("window.svg: %d %s", code, h.Get("Content-Type"))
	}
	saveFigure(t, "run-window-0.svg", []byte(svg))
	for _, want := range []string{"<title>Fitted window: ", "wavelength (nm, air)", "residual", "counts/nm"} {
		if !strings.Contains(svg, want) {
			t.Errorf("window SVG lacks %q", want)
		}
	}
}

func TestShowRunDownloads(t *testing.T) {
	f := newShowFixture(t)
	code, h, body := f.get(t, f.path("/lines.csv?v=1"))
	if code != http.StatusOK || !strings.HasPrefix(h.Get("Content-Type"), "text/csv") || !strings.Contains(h.Get("Content-Disposition"), "attachment") {
		t.Fatalf("lines.csv: %d %q %q", code, h.Get("Content-Type"), h.Get("Content-Disposition"))
	}
	rows, err := csv.NewReader(strings.NewReader(body)).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	col := map[string]int{}
	for i, c := range rows[0] {
		col[c] = i
	}
	for _, c := range []string{"upper_level", "name", "wavelength_air_nm", "center_nm", "intensity", "intensity_unc", "gauss_fwhm_nm",
		"lorentz_fwhm_nm", "lorentz_fwhm_unc_nm", "stark_fwhm_nm", "electron_density_m3", "electron_density_unc_m3"} {
		if _, ok := col[c]; !ok {
			t.Errorf("lines.csv lacks column %s", c)
		}
	}
	if len(rows) < 4 {
		t.Fatalf("lines.csv has %d rows", len(rows))
	}
	var hbeta []string
	for _, r := range rows[1:] {
		if r[col["upper_level"]] == "4" {
			hbeta = r
		}
	}
	ne, err := strconv.ParseFloat(hbeta[col["electron_density_m3"]], 64)
	if err != nil || ne < 1e21 || ne > 1e22 {
		t.Errorf("Hβ electron_density_m3 = %q, want about 5e21", hbeta[col["electron_density_m3"]])
	}

	code, h, body = f.get(t, f.path("/analysis.json"))
	if code != http.StatusOK || !strings.Contains(h.Get("Content-Disposition"), "attachment") {
		t.Fatalf("analysis.json: %d %q", code, h.Get("Content-Disposition"))
	}
	var out struct {
		RunID    int64           `json:"run_id"`
		Version  int             `json:"analysis_version"`
		Settings map[string]any  `json:"settings"`
		Result   json.RawMessage `json:"result"`
	}
	if err := json.Unmarshal([]byte(body), &out); err != nil {
		t.Fatal(err)
	}
	if out.RunID != f.runID || out.Version != 2 || out.Settings["instrument_fwhm_nm"] != 0.35 || !strings.Contains(string(out.Result), `"excitation_temperature_K"`) {
		t.Errorf("analysis.json: run %d version %d settings %v", out.RunID, out.Version, out.Settings)
	}
}

func TestShowReport(t *testing.T) {
	f := newShowFixture(t)
	code, _, body := f.get(t, f.path("/report"))
	if code != http.StatusOK {
		t.Fatalf("report: %d", code)
	}
	for _, want := range []string{`data-testid="report"`, `data-testid="review-state"`, "not signed off", `data-testid="texc"`, "<title>Boltzmann plot", "CODATA 2018", `data-testid="warnings"`} {
		if !strings.Contains(body, want) {
			t.Errorf("report lacks %q", want)
		}
	}
}
