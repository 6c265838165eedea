package server

import (
	"context"
	"encoding/json"
	"fmt"
	"net/http"
	"os"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"glowlog/diag"
	"glowlog/diag/spectrum"
	"glowlog/store"
)

// storedSettings are the settings stored with a run's analysis version.
func storedSettings(t *testing.T, db *store.DB, runID int64, version int) AnalysisSettings {
	t.Helper()
	a, err := db.AnalysisVersion(context.Background(), runID, version)
	if err != nil {
		t.Fatal(err)
	}
	var st AnalysisSettings
	if err := json.Unmarshal([]byte(a.Settings), &st); err != nil {
		t.Fatal(err)
	}
	return st
}

// checkRouteUsed: every spectrum result of a version took the route its
// settings say (or fell back to lines with the pipeline's warning). Line
// tables name no route and are skipped; at least one result must have
// been checked.
func checkRouteUsed(t *testing.T, db *store.DB, runID int64, version int) {
	t.Helper()
	a, err := db.AnalysisVersion(context.Background(), runID, version)
	if err != nil {
		t.Fatal(err)
	}
	var st AnalysisSettings
	if err := json.Unmarshal([]byte(a.Settings), &st); err != nil {
		t.Fatal(err)
	}
	checked := 0
	defer func() {
		if checked == 0 {
			t.Errorf("v%d: no result names its route: nothing checked", version)
		}
	}()
	for _, r := range a.Results {
		var m struct {
			Model string      `json:"model"`
			Flags []diag.Flag `json:"flags"`
		}
		if err := json.Unmarshal([]byte(r.Result), &m); err != nil {
			t.Fatal(err)
		}
		failed := false // a whole fit that gave no result falls back to lines, flagged
		for _, f := range m.Flags {
			failed = failed || f.Code == flagWholeFailed
		}
		if m.Model != "" {
			checked++
		}
		if failed && st.EffectiveModel() == spectrum.ModelWhole && m.Model == spectrum.ModelLines {
			continue
		}
		if m.Model != "" && m.Model != st.EffectiveModel() {
			t.Errorf("v%d %s: result route %q, settings say %q", version, r.AttachmentName, m.Model, st.EffectiveModel())
		}
	}
}

// TestRouteSettingsRunForm: the Log a run form's route and whole-fit
// options are stored with the first version and shown beside it; bad
// values, whole options with the lines route and "whole" for a run with
// only a line table come back as 422 naming the problem, storing nothing.
func TestRouteSettingsRunForm(t *testing.T) {
	f := newRunsFixture(t)
	_, sess := f.signIn("ada.quill", "operator")

	v := newRunValues()
	v.Set("model", "whole")
	v.Set("whole_areas", "free")
	v.Set("whole_free_gas_temperature", "1")
	rec := f.postMultipart("/runs", sess, v, formFile{"spectra", "hbeta.csv", hbetaSpectrum(t)})
	m := runLocation.FindStringSubmatch(rec.Header().Get("Location"))
	if rec.Code != http.StatusSeeOther || m == nil {
		t.Fatalf("create: %d %.300s", rec.Code, rec.Body.String())
	}
	id := atoi64(t, m[1])
	st := storedSettings(t, f.db, id, 1)
	if st.Model != "whole" || st.WholeAreas != "free" || !st.WholeFreeGasTemperature || st.WholeFreeInstrument {
		t.Errorf("stored settings %+v, want the form's route and options", st)
	}
	checkRouteUsed(t, f.db, id, 1)
	page := f.get(fmt.Sprintf("/runs/%d", id), sess).Body.String()
	if got := cell(page, "summary-route"); !strings.HasPrefix(got, "Route: whole-spectrum fit") {
		t.Errorf("summary route %q: the spectrum was not analysed by the whole-spectrum fit", got)
	}
	if !strings.Contains(page, "route: whole-spectrum fit (free line areas, gas temperature fitted)") {
		t.Errorf("run page does not show the route used: %s", regexp.MustCompile(`data-testid="computed-with">[^<]*`).FindString(page))
	}

	runs := f.count("runs")
	for _, c := range []struct {
		name   string
		set    map[string]string
		want   string
		spectr bool
	}{
		{"unknown route", map[string]string{"model": "global"}, `got &#34;global&#34;`, true},
		{"unknown area mode", map[string]string{"model": "whole", "whole_areas": "loose"}, `got &#34;loose&#34;`, true},
		{"whole option with lines", map[string]string{"model": "lines", "whole_free_instrument": "1"}, "whole_free_instrument: only the whole-spectrum fit", true},
		{"whole option with the default", map[string]string{"whole_areas": "free"}, "the default route, lines", true},
		{"whole for a line table only", map[string]string{"model": "whole", "line_table": tinySet(0)}, "always analysed line by line", false},
	} {
		t.Run(c.name, func(t *testing.T) {
			v := newRunValues()
			for k, x := range c.set {
				v.Set(k, x)
			}
			var files []formFile
			if c.spectr {
				files = append(files, formFile{"spectra", "hbeta.csv", hbetaSpectrum(t)})
			}
			rec := f.postMultipart("/runs", sess, v, files...)
			if body := rec.Body.String(); rec.Code != http.StatusUnprocessableEntity || !strings.Contains(body, c.want) {
				t.Errorf("status %d, want 422 with %q in %.400s", rec.Code, c.want, regexp.MustCompile(`(?s)class="flash error[^>]*>.{0,300}`).FindString(body))
			}
			if n := f.count("runs"); n != runs {
				t.Errorf("%d runs after a refused form, want %d", n, runs)
			}
		})
	}

	// "lines" for a line table is what happens anyway: accepted.
	v = newRunValues()
	v.Set("model", "lines")
	v.Set("line_table", tinySet(0))
	if rec := f.postForm("/runs", sess, v); rec.Code != http.StatusSeeOther {
		t.Errorf("lines route for a line table: %d %.300s", rec.Code, rec.Body.String())
	}
}

// TestRouteSettingsReanalyze: the reanalysis form is pre-filled with the
// version's route, stores the one chosen, keeps it when the field is
// absent, drops carried-over whole options when switching to lines, and
// refuses whole options given with lines.
func TestRouteSettingsReanalyze(t *testing.T) {
	f := newRunsFixture(t)
	_, sess := f.signIn("opal", store.RoleOperator)
	r := f.createTestRun(sess)
	path := fmt.Sprintf("/runs/%d/reanalyze", r.ID)
	base := func() map[string][]string {
		return map[string][]string{"reason": {"route"}, "instrument_fwhm_nm": {"0.03"}, "gas_temperature_k": {"1200"},
			"perturber": {"none"}, "line_shape": {"voigt"}}
	}
	post := func(extra map[string]string) (int, string) {
		v := base()
		for k, x := range extra {
			v[k] = []string{x}
		}
		rec := f.postForm(path, sess, v)
		return rec.Code, rec.Body.String()
	}

	if code, body := post(map[string]string{"model": "whole", "whole_areas": "free", "whole_free_instrument": "1"}); code != http.StatusSeeOther {
		t.Fatalf("whole: %d %.300s", code, body)
	}
	if st := storedSettings(t, f.db, r.ID, 2); st.Model != "whole" || st.WholeAreas != "free" || !st.WholeFreeInstrument {
		t.Errorf("v2 settings %+v", st)
	}
	checkRouteUsed(t, f.db, r.ID, 2)
	// The form shows them back.
	page := f.get(fmt.Sprintf("/runs/%d", r.ID), sess).Body.String()
	for _, want := range []string{`<option value="whole" selected`, `<option value="free" selected`,
		`name="whole_free_instrument" value="1" checked`, `<option value="">default (whole-spectrum fit; line by line for Voigt-shaped lines)</option>`} {
		if !strings.Contains(page, want) {
			t.Errorf("reanalysis form lacks %s", want)
		}
	}
	// No model field (an older form): the route is kept; the area choice
	// too; an unticked box is off.
	if code, body := post(map[string]string{}); code != http.StatusSeeOther {
		t.Fatalf("no model field: %d %.300s", code, body)
	}
	if st := storedSettings(t, f.db, r.ID, 3); st.Model != "whole" || st.WholeAreas != "free" || st.WholeFreeInstrument {
		t.Errorf("v3 settings %+v, want whole with free areas kept, instrument box off", st)
	}
	// Lines with the whole options disabled (not sent): they are dropped.
	if code, body := post(map[string]string{"model": "lines"}); code != http.StatusSeeOther {
		t.Fatalf("lines: %d %.300s", code, body)
	}
	if st := storedSettings(t, f.db, r.ID, 4); st.Model != "lines" || len(st.wholeOptionsSet()) != 0 {
		t.Errorf("v4 settings %+v, want lines without whole options", st)
	}
	// Lines with a whole option ticked: refused, naming it.
	if code, body := post(map[string]string{"model": "lines", "whole_free_gas_temperature": "1"}); code != http.StatusBadRequest || !strings.Contains(body, "whole_free_gas_temperature") {
		t.Errorf("lines + free gas temperature: %d, want 400 naming the option", code)
	}
	if code, body := post(map[string]string{"model": "both"}); code != http.StatusBadRequest || !strings.Contains(body, "&#34;both&#34;") {
		t.Errorf("model both: %d, want 400 naming it", code)
	}
	// A run with only a line table: "whole" is refused on reanalysis too.
	v := newRunValues()
	v.Set("line_table", tinySet(0))
	rec := f.postForm("/runs", sess, v)
	m := runLocation.FindStringSubmatch(rec.Header().Get("Location"))
	if rec.Code != http.StatusSeeOther || m == nil {
		t.Fatalf("line-table run: %d", rec.Code)
	}
	rec = f.postForm("/runs/"+m[1]+"/reanalyze", sess, map[string][]string{"reason": {"try whole"}, "model": {"whole"}, "perturber": {"none"}})
	if rec.Code != http.StatusUnprocessableEntity || !strings.Contains(rec.Body.String(), "always analysed line by line") {
		t.Errorf("whole for a line-table run on reanalysis: %d, want 422 saying line tables are analysed line by line", rec.Code)
	}
	// The default: "" stored.
	if code, body := post(map[string]string{"model": ""}); code != http.StatusSeeOther {
		t.Fatalf("default: %d %.300s", code, body)
	}
	if st := storedSettings(t, f.db, r.ID, 5); st.Model != "" {
		t.Errorf("v5 model %q, want the default \"\"", st.Model)
	}
}

// TestRouteSettingsAPI: the multipart fields set the route and options;
// bad values are 400 naming them and store nothing; a later upload that
// switches to lines drops the carried-over whole options.
func TestRouteSettingsAPI(t *testing.T) {
	f := newAPIFixture(t)
	id := f.createRun(runJSON)
	data, err := os.ReadFile("../testdata/spectra/scipy_hbeta_window_snr100.csv")
	if err != nil {
		t.Fatal(err)
	}
	path := "/api/v1/runs/" + strconv.FormatInt(id, 10) + "/measurements"
	fields := func(extra map[string]string) map[string]string {
		m := map[string]string{"instrument_fwhm_nm": "0.05", "gas_temperature_K": "1200", "perturber": "none", "pressure_Pa": "0", "line_shape": "voigt"}
		for k, v := range extra {
			m[k] = v
		}
		return m
	}
	for _, c := range []struct {
		extra map[string]string
		want  string
	}{
		{map[string]string{"model": "lorentz"}, `"lorentz"`},
		{map[string]string{"model": "whole", "whole_areas": "half"}, `"half"`},
		{map[string]string{"model": "whole", "whole_free_instrument": "maybe"}, `whole_free_instrument: "maybe"`},
		{map[string]string{"model": "lines", "whole_areas": "free"}, "only the whole-spectrum fit"},
	} {
		ct, mp := multipartBody(t, "s.csv", data, fields(c.extra))
		code, out := f.do(http.MethodPost, path, f.token, ct, mp)
		if msg, _ := out["error"].(string); code != http.StatusBadRequest || !strings.Contains(msg, c.want) {
			t.Errorf("%v: %d %v, want 400 with %s", c.extra, code, out, c.want)
		}
	}
	if atts, _ := f.db.Attachments(context.Background(), id); len(atts) != 0 {
		t.Fatalf("%d files stored by refused uploads", len(atts))
	}
	ct, mp := multipartBody(t, "a.csv", data, fields(map[string]string{"model": "whole", "whole_areas": "free", "whole_free_gas_temperature": "true"}))
	if code, out := f.do(http.MethodPost, path, f.token, ct, mp); code != http.StatusCreated {
		t.Fatalf("whole: %d %v", code, out)
	}
	if st := storedSettings(t, f.db, id, 1); st.Model != "whole" || st.WholeAreas != "free" || !st.WholeFreeGasTemperature {
		t.Errorf("v1 settings %+v", st)
	}
	checkRouteUsed(t, f.db, id, 1)
	ct, mp = multipartBody(t, "b.csv", data, fields(map[string]string{"model": "lines"}))
	if code, out := f.do(http.MethodPost, path, f.token, ct, mp); code != http.StatusCreated {
		t.Fatalf("lines: %d %v", code, out)
	}
	if st := storedSettings(t, f.db, id, 2); st.Model != "lines" || len(st.wholeOptionsSet()) != 0 {
		t.Errorf("v2 settings %+v, want lines without the whole options", st)
	}
	checkRouteUsed(t, f.db, id, 2)
}
