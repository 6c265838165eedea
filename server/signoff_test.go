package server

import (
	"context"
	"encoding/json"
	"fmt"
	"net/http"
	"net/http/httptest"
	"net/url"
	"strings"
	"testing"
	"time"
)

// TestSignedOffRunShowsApprovedVersion: a signed-off run cannot be
// reanalysed or given files through the form, the API or single
// reanalysis (409); a version added by a bulk reanalysis that included it
// changes nothing the run page, the API or the export show; a reviewer
// reopens it with a reason, which the review panel shows, and only then
// does the newest version become the one shown.
func TestSignedOffRunShowsApprovedVersion(t *testing.T) {
	f := newReviewFixture(t)
	ctx := context.Background()
	id := analysedRun(t, f.s, f.op, "approved Hβ run", time.Date(2026, 5, 1, 8, 0, 0, 0, time.UTC), nil)
	op, rev, vie := f.client(t, f.op), f.client(t, f.rev), f.client(t, f.vie)
	base := fmt.Sprintf("/runs/%d", id)

	if code, _ := op.req(http.MethodPost, base+"/submit", url.Values{}); code != http.StatusSeeOther {
		t.Fatalf("submit: %d", code)
	}
	// The sign-off form names the version the reviewer saw.
	_, page := rev.req(http.MethodGet, base, nil)
	if !strings.Contains(page, `name="version" value="1"`) || !strings.Contains(page, "Sign off analysis version 1") {
		t.Fatalf("sign-off form does not carry the version: %.3000s", page)
	}
	if code, body := rev.req(http.MethodPost, base+"/signoff", url.Values{"version": {"1"}}); code != http.StatusSeeOther {
		t.Fatalf("sign-off: %d %.300s", code, body)
	}
	before, _ := f.s.DB.GetRun(ctx, id)

	// Every way to change its numbers as its operator or a reviewer: 409.
	reason := url.Values{"reason": {"try"}, "instrument_fwhm_nm": {"0.08"}, "gas_temperature_k": {"1200"}}
	for _, h := range []*htmlClient{op, rev} {
		code, body := h.req(http.MethodPost, base+"/reanalyze", reason)
		if code != http.StatusConflict || !strings.Contains(body, "signed off (approved analysis version 1)") {
			t.Errorf("reanalysis of a signed-off run: %d %.300s", code, body)
		}
	}
	if code, body := op.req(http.MethodPost, base+"/attachments", url.Values{"line_table": {tinySet(1)}}); code != http.StatusConflict {
		t.Errorf("form upload to a signed-off run: %d %.300s", code, body)
	}
	tok, h := NewToken()
	if _, err := f.s.DB.CreateToken(ctx, f.op.ID, "t", h); err != nil {
		t.Fatal(err)
	}
	api := func(method, path, ct, body string) (int, map[string]any) {
		req := httptest.NewRequest(method, path, strings.NewReader(body))
		req.Header.Set("Authorization", "Bearer "+tok)
		if ct != "" {
			req.Header.Set("Content-Type", ct)
		}
		rec := httptest.NewRecorder()
		f.s.ServeHTTP(rec, req)
		var out map[string]any
		_ = json.Unmarshal(rec.Body.Bytes(), &out)
		return rec.Code, out
	}
	if code, out := api(http.MethodPost, "/api/v1"+base+"/measurements", "application/json", tinySet(1)); code != http.StatusConflict ||
		!strings.Contains(fmt.Sprint(out["error"]), "signed off") {
		t.Errorf("API upload to a signed-off run: %d %v", code, out)
	}
	uid := f.rev.ID
	if _, err := f.s.ReanalyzeRun(ctx, id, AnalysisSettings{InstrumentFWHMNM: 0.08}, &uid, "direct"); err == nil {
		t.Error("ReanalyzeRun of a signed-off run succeeded")
	}
	if as, _ := f.s.DB.Analyses(ctx, id); len(as) != 1 {
		t.Fatalf("%d versions after refused changes, want 1", len(as))
	}

	// A bulk reanalysis that included it adds version 2 with another
	// instrument width (other numbers); nothing shown changes.
	if _, err := f.s.reanalyzeRunWith(ctx, id, AnalysisSettings{InstrumentFWHMNM: 0.12, GasTemperatureK: 1200, PressurePa: 120},
		&uid, "bulk, included", true); err != nil {
		t.Fatal(err)
	}
	after, _ := f.s.DB.GetRun(ctx, id)
	if after.AnalysisVersion != 1 || *after.NeM3 != *before.NeM3 {
		t.Fatalf("signed-off summary changed: v%d n_e %g → %g", after.AnalysisVersion, *before.NeM3, *after.NeM3)
	}
	v2, _ := f.s.DB.AnalysisVersion(ctx, id, 2)
	if *v2.Results[0].NeM3 == *before.NeM3 {
		t.Fatal("version 2 has the same n_e: the test would not see a change")
	}
	_, page = vie.req(http.MethodGet, base, nil)
	for _, want := range []string{"Signed off — approved analysis version 1", "Results of analysis version 1", `data-testid="approved-badge"`,
		`data-testid="not-approved-badge"`} {
		if !strings.Contains(page, want) {
			t.Errorf("run page lacks %q", want)
		}
	}
	if strings.Contains(page, `data-testid="reopen-form"`) {
		t.Error("a viewer sees the reopen form")
	}
	if _, page := vie.req(http.MethodGet, base+"?v=2", nil); !strings.Contains(page, `data-testid="not-approved"`) {
		t.Error("version 2 of a signed-off run is not marked as not approved")
	}
	code, out := api(http.MethodGet, "/api/v1"+base, "", "")
	an, _ := out["analysis"].(map[string]any)
	sum, _ := out["summary"].(map[string]any)
	if code != http.StatusOK || an["version"] != 1.0 || sum["analysis_version"] != 1.0 || out["approved_analysis_version"] != 1.0 ||
		sum["electron_density_m3"] != *before.NeM3 {
		t.Errorf("API shows %v / %v / approved %v", an["version"], sum, out["approved_analysis_version"])
	}
	_, csv := vie.req(http.MethodGet, "/runs.csv", nil)
	if !strings.Contains(csv, strings.TrimSpace(csvNum(before.NeM3))) || strings.Contains(csv, csvNum(v2.Results[0].NeM3)) {
		t.Errorf("export does not show the approved n_e %s: %s", csvNum(before.NeM3), csv)
	}
	// The report and downloads follow the approved version too.
	if _, js := vie.req(http.MethodGet, base+"/analysis.json", nil); !strings.Contains(js, `"analysis_version": 1,`) {
		t.Errorf("analysis.json is not the approved version's: %.300s", js)
	}

	// Reopen: reviewers only, with a reason, recorded and shown.
	if code, _ := op.req(http.MethodPost, base+"/reopen", url.Values{"note": {"mine"}}); code != http.StatusForbidden {
		t.Errorf("operator reopening: %d, want 403", code)
	}
	if code, body := rev.req(http.MethodPost, base+"/reopen", url.Values{"note": {""}}); code != http.StatusBadRequest || !strings.Contains(body, "reason is required") {
		t.Errorf("reopen without a reason: %d %.300s", code, body)
	}
	_, page = rev.req(http.MethodGet, base, nil)
	if !strings.Contains(page, `data-testid="reopen-form"`) {
		t.Error("the reviewer sees no reopen form")
	}
	if code, _ := rev.req(http.MethodPost, base+"/reopen", url.Values{"note": {"instrument width was wrong"}}); code != http.StatusSeeOther {
		t.Fatalf("reopen: %d", code)
	}
	_, page = vie.req(http.MethodGet, base, nil)
	for _, want := range []string{`data-testid="review-reopened"`, "approval of version 1 withdrawn", "instrument width was wrong",
		"Results of analysis version 2"} {
		if !strings.Contains(page, want) {
			t.Errorf("run page after reopen lacks %q", want)
		}
	}
	code, out = api(http.MethodGet, "/api/v1"+base, "", "")
	if an, _ := out["analysis"].(map[string]any); code != http.StatusOK || an["version"] != 2.0 || out["status"] != "returned" {
		t.Errorf("API after reopen: %v status %v", an["version"], out["status"])
	}
	// Signing off again, with the version seen before the reopen, is refused.
	if code, _ := op.req(http.MethodPost, base+"/submit", url.Values{}); code != http.StatusSeeOther {
		t.Fatalf("resubmit: %d", code)
	}
	if code, body := rev.req(http.MethodPost, base+"/signoff", url.Values{"version": {"1"}}); code != http.StatusConflict ||
		!strings.Contains(body, "not the version 1 you reviewed") {
		t.Errorf("sign-off of a stale version: %d %.300s", code, body)
	}
}
