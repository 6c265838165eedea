package server

import (
	"html"
	"net/http"
	"net/url"
	"strconv"
	"strings"
	"testing"

	"github.com/labstack/echo/v4"

	"glowlog/diag"
	"glowlog/store"
)

// Measurement sets with extreme but valid values (issue 7, item 5).
const (
	extremeTiny = `{"intensity_unit":"photon","lines":[{"upper_level":3,"intensity":5e-324},{"upper_level":4,"intensity":1e-320},{"upper_level":5,"intensity":1e-322}]}`
	extremeBig  = `{"intensity_unit":"energy","lines":[{"upper_level":3,"intensity":1.7e308},{"upper_level":4,"intensity":1e307}]}`
	extremeSig  = `{"intensity_unit":"photon","lines":[{"upper_level":3,"intensity":1,"intensity_unc":1e-160},{"upper_level":4,"intensity":0.2,"intensity_unc":0.01}]}`
)

// TestAPIExtremeValues: the API analyses extreme intensities (201) and
// answers an unusable uncertainty with 422 naming line, field and value,
// storing nothing; duplicate keys and deep nesting are 422 too.
func TestAPIExtremeValues(t *testing.T) {
	f := newAPIFixture(t)
	id := f.createRun(runJSON)
	path := "/api/v1/runs/" + strconv.FormatInt(id, 10) + "/measurements"
	for _, body := range []string{extremeTiny, extremeBig} {
		if code, out := f.do(http.MethodPost, path, f.token, "application/json", strings.NewReader(body)); code != http.StatusCreated {
			t.Errorf("%s: %d %v", body, code, out)
		}
	}
	atts, anas := f.counts()
	bad := []struct{ body, want string }{
		{extremeSig, "lines[0] (n=3): intensity_unc = 1e-160"},
		{`{"intensity_unit":"photon","lines":[{"upper_level":3,"intensity":1,"intensity":2}]}`, `duplicate key "intensity"`},
		{`{"intensity_unit":"photon","lines":` + strings.Repeat("[", 20000) + strings.Repeat("]", 20000) + `}`, "nested more than 8 deep"},
	}
	for _, b := range bad {
		code, out := f.do(http.MethodPost, path, f.token, "application/json", strings.NewReader(b.body))
		msg, _ := out["error"].(string)
		if code != http.StatusUnprocessableEntity || !strings.Contains(msg, b.want) {
			t.Errorf("%.60s…: %d %q, want 422 naming %q", b.body, code, msg, b.want)
		}
	}
	if a, n := f.counts(); a != atts || n != anas {
		t.Errorf("rejected uploads stored %d attachments, %d analyses", a-atts, n-anas)
	}
}

// TestFormExtremeValues: the same on the run page's upload form.
func TestFormExtremeValues(t *testing.T) {
	f := newRunsFixture(t)
	_, owner := f.signIn("opal", store.RoleOperator)
	r := f.createTestRun(owner)
	path := "/runs/" + idStr(r.ID) + "/attachments"
	if rec := f.postMultipart(path, owner, url.Values{"line_table": {extremeTiny}}); rec.Code != http.StatusSeeOther {
		t.Errorf("5e-324: %d %s", rec.Code, rec.Body.String())
	}
	atts := f.count("attachments")
	rec := f.postMultipart(path, owner, url.Values{"line_table": {extremeSig}})
	body := html.UnescapeString(rec.Body.String())
	if rec.Code != http.StatusUnprocessableEntity || !strings.Contains(body, "intensity_unc = 1e-160") {
		t.Errorf("σ = 1e-160: %d %s", rec.Code, body)
	}
	if f.count("attachments") != atts {
		t.Error("a rejected upload stored a file")
	}
	// "Log a run" with the typed line table: the form again, 422, no run.
	runs := f.count("runs")
	v := newRunValues()
	v.Set("line_table", extremeSig)
	rec = f.postMultipart("/runs", owner, v)
	body = html.UnescapeString(rec.Body.String())
	if rec.Code != http.StatusUnprocessableEntity || !strings.Contains(body, "intensity_unc = 1e-160") {
		t.Errorf("new run with σ = 1e-160: %d %.300s", rec.Code, body)
	}
	if f.count("runs") != runs {
		t.Error("a rejected run was stored")
	}
}

// TestHandleErrorNumeric: a numeric input error reaching the error
// handler is a 422 with its message, not a 500.
func TestHandleErrorNumeric(t *testing.T) {
	f := newAPIFixture(t)
	f.s.Echo.GET("/api/v1/test-numeric", func(echo.Context) error {
		_, err := diag.Analyze(diag.Measurement{Lines: []diag.MeasuredLine{
			{Upper: 3, Intensity: 1, IntensityUnc: 1e-160}, {Upper: 4, Intensity: 0.2, IntensityUnc: 0.01}}})
		return err
	})
	code, out := f.do(http.MethodGet, "/api/v1/test-numeric", f.token, "", nil)
	if msg, _ := out["error"].(string); code != http.StatusUnprocessableEntity || !strings.Contains(msg, "intensity_unc = 1e-160") {
		t.Errorf("%d %q", code, msg)
	}
}

// TestAPICreateRunShape: a run body nested too deep or repeating a key is
// a 400 naming the problem, and creates nothing.
func TestAPICreateRunShape(t *testing.T) {
	f := newAPIFixture(t)
	bad := []struct{ body, want string }{
		{`{"title":"a","started_at":"2026-03-04T09:30:00Z","source_type":"dc_glow",` + "\n" + `"title":"b"}`, `request body:2: title: duplicate key "title"`},
		{`{"title":"a","started_at":"2026-03-04T09:30:00Z","source_type":"dc_glow","Title":"b"}`, `key "Title" repeats "title"`},
		{`{"tags":` + strings.Repeat("[", 20000) + strings.Repeat("]", 20000) + `}`, "nested more than 8 deep"},
	}
	for _, b := range bad {
		code, out := f.do(http.MethodPost, "/api/v1/runs", f.token, "application/json", strings.NewReader(b.body))
		if msg, _ := out["error"].(string); code != http.StatusBadRequest || !strings.Contains(msg, b.want) {
			t.Errorf("%.60s…: %d %q, want 400 naming %q", b.body, code, msg, b.want)
		}
	}
	if _, list := f.do(http.MethodGet, "/api/v1/runs", f.token, "", nil); list["total"] != 0.0 {
		t.Errorf("total = %v after rejected bodies", list["total"])
	}
}
