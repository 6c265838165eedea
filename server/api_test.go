package server

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"io"
	"log/slog"
	"math"
	"mime/multipart"
	"net/http"
	"net/http/httptest"
	"os"
	"strconv"
	"strings"
	"testing"

	"glowlog/store"
)

// apiFixture is a server on a temporary database with one operator and
// an API token for it.
type apiFixture struct {
	t     *testing.T
	s     *Server
	db    *store.DB
	token string
	user  store.User
}

func newAPIFixture(t *testing.T) *apiFixture {
	t.Helper()
	ctx := context.Background()
	db := testDB(t)
	s := New(db, Options{Log: slog.New(slog.NewTextHandler(io.Discard, nil))})
	u, err := db.CreateUser(ctx, "ada", store.RoleOperator, "x")
	if err != nil {
		t.Fatal(err)
	}
	tok, h := NewToken()
	if _, err := db.CreateToken(ctx, u.ID, "test", h); err != nil {
		t.Fatal(err)
	}
	return &apiFixture{t: t, s: s, db: db, token: tok, user: u}
}

// do sends a request with the fixture's token (token "" sends none).
func (f *apiFixture) do(method, path, token, contentType string, body io.Reader) (int, map[string]any) {
	f.t.Helper()
	req := httptest.NewRequest(method, path, body)
	if token != "" {
		req.Header.Set("Authorization", "Bearer "+token)
	}
	if contentType != "" {
		req.Header.Set("Content-Type", contentType)
	}
	rec := httptest.NewRecorder()
	f.s.ServeHTTP(rec, req)
	var out map[string]any
	if err := json.Unmarshal(rec.Body.Bytes(), &out); err != nil {
		f.t.Fatalf("%s %s: status %d, body is not JSON: %q", method, path, rec.Code, rec.Body.String())
	}
	return rec.Code, out
}

func (f *apiFixture) createRun(body string) int64 {
	f.t.Helper()
	code, out := f.do(http.MethodPost, "/api/v1/runs", f.token, "application/json", strings.NewReader(body))
	if code != http.StatusCreated {
		f.t.Fatalf("create run: %d %v", code, out)
	}
	return int64(out["id"].(float64))
}

// counts returns the numbers of attachments and analyses in the database.
func (f *apiFixture) counts() (int, int) {
	f.t.Helper()
	var a, n int
	sdb := f.db.SQL()
	if err := sdb.QueryRow(`SELECT count(*) FROM attachments`).Scan(&a); err != nil {
		f.t.Fatal(err)
	}
	if err := sdb.QueryRow(`SELECT count(*) FROM analyses`).Scan(&n); err != nil {
		f.t.Fatal(err)
	}
	return a, n
}

func multipartBody(t *testing.T, file string, content []byte, fields map[string]string) (string, io.Reader) {
	t.Helper()
	var buf bytes.Buffer
	w := multipart.NewWriter(&buf)
	for k, v := range fields {
		if err := w.WriteField(k, v); err != nil {
			t.Fatal(err)
		}
	}
	if file != "" {
		fw, err := w.CreateFormFile("file", file)
		if err != nil {
			t.Fatal(err)
		}
		fw.Write(content)
	}
	w.Close()
	return w.FormDataContentType(), &buf
}

const runJSON = `{"title": "Hβ check", "started_at": "2026-03-04T09:30:00Z", "source_type": "plasma_jet",
	"chamber": "Jet bench J2", "recipe": "Ar/H2 1 %", "gas_mixture": "Ar + 1 % H2", "pressure_Pa": 101325,
	"power_W": 30, "perturber": "Ar", "tags": ["API", "check"]}`

func TestAPIAuth(t *testing.T) {
	f := newAPIFixture(t)
	if code, out := f.do(http.MethodGet, "/api/v1/runs", "", "", nil); code != http.StatusUnauthorized || out["error"] == nil {
		t.Errorf("no token: %d %v", code, out)
	}
	if code, _ := f.do(http.MethodGet, "/api/v1/runs", "not-a-token", "", nil); code != http.StatusUnauthorized {
		t.Errorf("bad token: %d", code)
	}
	if code, _ := f.do(http.MethodGet, "/api/v1/runs", f.token, "", nil); code != http.StatusOK {
		t.Errorf("good token: %d", code)
	}
	toks, err := f.db.Tokens(context.Background(), f.user.ID)
	if err != nil {
		t.Fatal(err)
	}
	if err := f.db.RevokeToken(context.Background(), f.user.ID, toks[0].ID); err != nil {
		t.Fatal(err)
	}
	if code, _ := f.do(http.MethodGet, "/api/v1/runs", f.token, "", nil); code != http.StatusUnauthorized {
		t.Errorf("revoked token: %d", code)
	}
}

func TestAPICreateRun(t *testing.T) {
	f := newAPIFixture(t)
	id := f.createRun(runJSON)
	code, out := f.do(http.MethodGet, "/api/v1/runs/"+strconv.FormatInt(id, 10), f.token, "", nil)
	if code != http.StatusOK || out["chamber"] != "Jet bench J2" || out["status"] != "draft" || out["pressure_Pa"] != 101325.0 {
		t.Errorf("get run: %d %v", code, out)
	}
	bad := []struct{ body, want string }{
		{`{"title": "x", "started_at": "2026-03-04T09:30:00Z", "source_type": "dc_glow", "presure_Pa": 3}`, `"presure_Pa"`},
		{`{"title": "x", "started_at": "yesterday", "source_type": "dc_glow"}`, "started_at"},
		{`{"title": "x", "started_at": "2026-03-04T09:30:00Z", "source_type": "arc"}`, "source type"},
		{`{"title": "x", "started_at": "2026-03-04T09:30:00Z", "source_type": "dc_glow", "pressure_Pa": "low"}`, "pressure_Pa"},
		{`{"title": "x", "started_at": "2026-03-04T09:30:00Z", "source_type": "dc_glow", "pressure_Pa": -1}`, "pressure"},
		{`{"title": "x", "started_at": "2026-03-04T09:30:00Z", "source_type": "dc_glow", "perturber": "Zz", "chamber": "New one"}`, "perturber"},
		{`{"title": "x"`, "JSON"},
	}
	for _, b := range bad {
		code, out := f.do(http.MethodPost, "/api/v1/runs", f.token, "application/json", strings.NewReader(b.body))
		msg, _ := out["error"].(string)
		if code != http.StatusBadRequest || !strings.Contains(msg, b.want) {
			t.Errorf("%s: %d %q, want 400 naming %s", b.body, code, msg, b.want)
		}
	}
	_, list := f.do(http.MethodGet, "/api/v1/runs", f.token, "", nil)
	if list["total"] != 1.0 {
		t.Errorf("after bad inputs total = %v, want 1", list["total"])
	}
	ch, _ := f.db.Chambers(context.Background())
	if len(ch) != 1 {
		t.Errorf("%d chambers, want 1 (a rejected run must not create one)", len(ch))
	}
}

func TestAPIAddMeasurementSet(t *testing.T) {
	f := newAPIFixture(t)
	id := f.createRun(runJSON)
	body, err := os.ReadFile("../testdata/example_hbeta.json")
	if err != nil {
		t.Fatal(err)
	}
	code, out := f.do(http.MethodPost, "/api/v1/runs/"+strconv.FormatInt(id, 10)+"/measurements", f.token, "application/json", bytes.NewReader(body))
	if code != http.StatusCreated {
		t.Fatalf("%d %v", code, out)
	}
	// README worked example: 9394.8 K for this file.
	if tx, _ := out["excitation_temperature_K"].(float64); math.Abs(tx-9394.8) > 1 {
		t.Errorf("excitation_temperature_K = %v, want 9394.8", out["excitation_temperature_K"])
	}
	if out["analysis_version"] != 1.0 || out["run_id"] != float64(id) || out["attachment_id"] == nil {
		t.Errorf("ids: %v %v %v", out["run_id"], out["attachment_id"], out["analysis_version"])
	}
	_, run := f.do(http.MethodGet, "/api/v1/runs/"+strconv.FormatInt(id, 10), f.token, "", nil)
	sum := run["summary"].(map[string]any)
	if sum["analysis_version"] != 1.0 || sum["excitation_temperature_K"] == nil {
		t.Errorf("summary %v", sum)
	}

	// Bad inputs: 4xx naming the problem, nothing stored.
	a0, n0 := f.counts()
	bad := []struct {
		ct, body string
		code     int
		want     string
	}{
		{"application/json", `{"intensity_unit": "photon", "lines": [{"upper_level": 4, "intensity": -5}]}`, 422, "intensity"},
		{"application/json", `{"intensity_unit": "photon", "lines": [], "colour": 1}`, 422, "colour"},
		{"text/plain", `hello`, 415, "Content-Type"},
	}
	for _, b := range bad {
		code, out := f.do(http.MethodPost, "/api/v1/runs/"+strconv.FormatInt(id, 10)+"/measurements", f.token, b.ct, strings.NewReader(b.body))
		msg, _ := out["error"].(string)
		if code != b.code || !strings.Contains(msg, b.want) {
			t.Errorf("%s: %d %q, want %d naming %s", b.body, code, msg, b.code, b.want)
		}
	}
	ct, mp := multipartBody(t, "junk.csv", []byte("wavelength_nm,counts\nabc,def\n"), map[string]string{"instrument_fwhm_nm": "0.05"})
	if code, out := f.do(http.MethodPost, "/api/v1/runs/"+strconv.FormatInt(id, 10)+"/measurements", f.token, ct, mp); code != 422 || !strings.Contains(out["error"].(string), "junk.csv") {
		t.Errorf("junk spectrum: %d %v", code, out)
	}
	ct, mp = multipartBody(t, "s.csv", []byte("1,2\n"), map[string]string{"instrument_fwhm_nm": "wide"})
	if code, out := f.do(http.MethodPost, "/api/v1/runs/"+strconv.FormatInt(id, 10)+"/measurements", f.token, ct, mp); code != 400 || !strings.Contains(out["error"].(string), "instrument_fwhm_nm") {
		t.Errorf("bad setting: %d %v", code, out)
	}
	ct, mp = multipartBody(t, "", nil, map[string]string{"kind": "spectrum"})
	if code, out := f.do(http.MethodPost, "/api/v1/runs/"+strconv.FormatInt(id, 10)+"/measurements", f.token, ct, mp); code != 400 || !strings.Contains(out["error"].(string), "file") {
		t.Errorf("no file: %d %v", code, out)
	}
	if a, n := f.counts(); a != a0 || n != n0 {
		t.Errorf("after bad inputs %d attachments, %d analyses; want %d, %d", a, n, a0, n0)
	}
	if code, _ := f.do(http.MethodPost, "/api/v1/runs/999/measurements", f.token, "application/json", bytes.NewReader(body)); code != 404 {
		t.Errorf("unknown run: %d", code)
	}

	// Someone else's run: 403.
	other, err := f.db.CreateUser(context.Background(), "bo", store.RoleOperator, "x")
	if err != nil {
		t.Fatal(err)
	}
	tok, h := NewToken()
	f.db.CreateToken(context.Background(), other.ID, "t", h)
	if code, _ := f.do(http.MethodPost, "/api/v1/runs/"+strconv.FormatInt(id, 10)+"/measurements", tok, "application/json", bytes.NewReader(body)); code != 403 {
		t.Errorf("other operator: %d", code)
	}
}

func TestAPIAddSpectrum(t *testing.T) {
	f := newAPIFixture(t)
	id := f.createRun(runJSON)
	data, err := os.ReadFile("../testdata/spectra/scipy_hbeta_window_snr100.csv")
	if err != nil {
		t.Fatal(err)
	}
	ct, mp := multipartBody(t, "scipy_hbeta_window_snr100.csv", data,
		map[string]string{"kind": "spectrum", "instrument_fwhm_nm": "0.05", "gas_temperature_K": "1200", "perturber": "none", "pressure_Pa": "0",
			"line_shape": "voigt"}) // the scipy lines are Voigt profiles
	code, out := f.do(http.MethodPost, "/api/v1/runs/"+strconv.FormatInt(id, 10)+"/measurements", f.token, ct, mp)
	if code != http.StatusCreated {
		t.Fatalf("%d %v", code, out)
	}
	// Truth of the scipy file: n_e = 1e22 m⁻³ (its .truth.json).
	if ne, _ := out["electron_density_m3"].(float64); math.Abs(ne/1e22-1) > 0.05 {
		t.Errorf("electron_density_m3 = %v, want 1e22 ± 5 %%", out["electron_density_m3"])
	}
	_, run := f.do(http.MethodGet, "/api/v1/runs/"+strconv.FormatInt(id, 10), f.token, "", nil)
	an := run["analysis"].(map[string]any)
	var st AnalysisSettings
	raw, _ := json.Marshal(an["settings"])
	json.Unmarshal(raw, &st)
	if st.InstrumentFWHMNM != 0.05 || st.GasTemperatureK != 1200 {
		t.Errorf("stored settings %+v", st)
	}
}

func TestAPIListFilters(t *testing.T) {
	f := newAPIFixture(t)
	f.createRun(runJSON)
	f.createRun(`{"title": "glow A", "started_at": "2026-01-10T10:00:00Z", "source_type": "dc_glow", "chamber": "Tube G7", "tags": ["maintenance"]}`)
	f.createRun(`{"title": "glow B", "started_at": "2026-02-10T10:00:00Z", "source_type": "dc_glow", "chamber": "Tube G7"}`)
	cases := []struct {
		q    string
		want float64
	}{
		{"", 3}, {"?source=dc_glow", 2}, {"?chamber=Tube%20G7", 2}, {"?tag=maintenance", 1}, {"?q=glow", 2},
		{"?from=2026-02-01&to=2026-02-28", 1}, {"?operator=ada", 3}, {"?status=draft&sort=-started&limit=1", 3},
	}
	for _, c := range cases {
		code, out := f.do(http.MethodGet, "/api/v1/runs"+c.q, f.token, "", nil)
		if code != 200 || out["total"] != c.want {
			t.Errorf("%s: %d total %v, want %v", c.q, code, out["total"], c.want)
		}
	}
	_, out := f.do(http.MethodGet, "/api/v1/runs?sort=title&limit=2", f.token, "", nil)
	items := out["items"].([]any)
	if len(items) != 2 || items[0].(map[string]any)["title"] != "Hβ check" {
		t.Errorf("sorted page: %v", items)
	}
	for _, q := range []string{"?source=arc", "?chamber=Nowhere", "?from=soon", "?limit=-1", "?sort=colour", "?status=lost", "?operator=nobody"} {
		if code, out := f.do(http.MethodGet, "/api/v1/runs"+q, f.token, "", nil); code != 400 || out["error"] == nil {
			t.Errorf("%s: %d %v", q, code, out)
		}
	}
}

func TestAPITrends(t *testing.T) {
	f := newAPIFixture(t)
	id := f.createRun(runJSON)
	body, _ := os.ReadFile("../testdata/example_hbeta.json")
	if code, out := f.do(http.MethodPost, "/api/v1/runs/"+strconv.FormatInt(id, 10)+"/measurements", f.token, "application/json", bytes.NewReader(body)); code != 201 {
		t.Fatalf("%d %v", code, out)
	}
	f.createRun(`{"title": "no analysis", "started_at": "2026-02-10T10:00:00Z", "source_type": "dc_glow"}`)
	code, out := f.do(http.MethodGet, "/api/v1/trends?y=texc_k", f.token, "", nil)
	if code != 200 {
		t.Fatalf("%d %v", code, out)
	}
	pts := out["points"].([]any)
	if len(pts) != 1 || out["missing"] != 1.0 || out["y"].(map[string]any)["unit"] != "K" {
		t.Errorf("trend %v", out)
	}
	if code, out := f.do(http.MethodGet, "/api/v1/trends?y=colour", f.token, "", nil); code != 400 || !strings.Contains(out["error"].(string), "colour") {
		t.Errorf("bad field: %d %v", code, out)
	}
}

// TestAPILineShapeBad: an unknown line shape is refused with 400 naming it,
// and nothing is added to the run.
func TestAPILineShapeBad(t *testing.T) {
	f := newAPIFixture(t)
	id := f.createRun(runJSON)
	data, err := os.ReadFile("../testdata/spectra/scipy_hbeta_window_snr100.csv")
	if err != nil {
		t.Fatal(err)
	}
	ct, mp := multipartBody(t, "scipy_hbeta_window_snr100.csv", data,
		map[string]string{"kind": "spectrum", "instrument_fwhm_nm": "0.05", "gas_temperature_K": "1200", "line_shape": "lorentz"})
	code, out := f.do(http.MethodPost, "/api/v1/runs/"+strconv.FormatInt(id, 10)+"/measurements", f.token, ct, mp)
	if msg, _ := out["error"].(string); code != http.StatusBadRequest || !strings.Contains(msg, "line shape") {
		t.Errorf("%d %v, want 400 naming the line shape", code, out)
	}
	atts, err := f.db.Attachments(context.Background(), id)
	if err != nil || len(atts) != 0 {
		t.Errorf("attachments after a refused upload: %d (%v)", len(atts), err)
	}
}

// TestAPIAddBatch posts three spectra in one request (three "file" parts):
// they are stored in one transaction with one analysis version holding
// them and the run's earlier file; the answer lists each with its result;
// a bad file in a batch stores none of them and is named.
func TestAPIAddBatch(t *testing.T) {
	f := newAPIFixture(t)
	id := f.createRun(runJSON)
	data, err := os.ReadFile("../testdata/spectra/scipy_hbeta_window_snr100.csv")
	if err != nil {
		t.Fatal(err)
	}
	path := "/api/v1/runs/" + strconv.FormatInt(id, 10) + "/measurements"
	// A Voigt-shaped scipy spectrum: the Voigt line model (see line_shape).
	fields := map[string]string{"instrument_fwhm_nm": "0.05", "gas_temperature_K": "1200", "perturber": "none", "pressure_Pa": "0", "line_shape": "voigt"}
	ct, mp := multipartBody(t, "first.csv", data, fields)
	if code, out := f.do(http.MethodPost, path, f.token, ct, mp); code != http.StatusCreated {
		t.Fatalf("first file: %d %v", code, out)
	}
	batch := func(names []string, contents [][]byte) (string, io.Reader) {
		var b bytes.Buffer
		w := multipart.NewWriter(&b)
		for i, n := range names {
			fw, _ := w.CreateFormFile("file", n)
			fw.Write(contents[i])
		}
		w.Close()
		return w.FormDataContentType(), &b
	}
	ct, mp = batch([]string{"b1.csv", "b2.csv", "b3.csv"}, [][]byte{data, data, data})
	code, out := f.do(http.MethodPost, path, f.token, ct, mp)
	if code != http.StatusCreated {
		t.Fatalf("batch: %d %v", code, out)
	}
	ms, _ := out["measurements"].([]any)
	if out["analysis_version"] != 2.0 || len(ms) != 3 {
		t.Fatalf("batch answer: %v", out)
	}
	for _, m := range ms {
		m := m.(map[string]any)
		if ne, _ := m["electron_density_m3"].(float64); m["attachment_id"] == nil || m["analysis_version"] != 2.0 || math.Abs(ne/1e22-1) > 0.05 {
			t.Errorf("batch item: attachment %v, version %v, n_e %v", m["attachment_id"], m["analysis_version"], m["electron_density_m3"])
		}
	}
	a, err := f.db.AnalysisVersion(context.Background(), id, 0)
	if err != nil || a.Version != 2 || len(a.Results) != 4 {
		t.Fatalf("latest version %d with %d results (%v), want v2 with all 4 files", a.Version, len(a.Results), err)
	}
	// A file that is not a spectrum: the whole batch is refused, naming it.
	ct, mp = batch([]string{"b4.csv", "junk.csv"}, [][]byte{data, []byte("not,a\nspectrum\n")})
	if code, out := f.do(http.MethodPost, path, f.token, ct, mp); code != http.StatusUnprocessableEntity || !strings.Contains(fmt.Sprint(out["error"]), "junk.csv") {
		t.Errorf("bad batch: %d %v", code, out)
	}
	if atts, _ := f.db.Attachments(context.Background(), id); len(atts) != 4 {
		t.Errorf("%d files after a refused batch, want 4", len(atts))
	}
}
